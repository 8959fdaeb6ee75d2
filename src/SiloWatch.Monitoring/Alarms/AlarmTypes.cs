using SiloWatch.Monitoring.Wall;

namespace SiloWatch.Monitoring.Alarms;

/// <summary>
/// Alarm states after the ISA-18.2 / IEC 62682 alarm state model [M: from memory of ISA-18.2-2016 §11
/// and its state-transition figure].
/// </summary>
public enum AlarmStateName
{
    /// <summary>Process normal, alarm acknowledged (A).</summary>
    Normal,

    /// <summary>In alarm, not acknowledged (B).</summary>
    Unacknowledged,

    /// <summary>In alarm, acknowledged (C).</summary>
    Acknowledged,

    /// <summary>Returned to normal before it was acknowledged (D).</summary>
    ReturnedToNormalUnacknowledged,

    /// <summary>A latching alarm whose condition has cleared: stays until an operator resets it (E).</summary>
    Latched,

    /// <summary>Shelved by an operator for a limited time (F).</summary>
    Shelved,

    /// <summary>Suppressed by design: outside the state it is meant for (G), e.g. asymmetry while not discharging.</summary>
    SuppressedByDesign,

    /// <summary>Taken out of service (H), e.g. for maintenance of its sensors.</summary>
    OutOfService,
}

/// <summary>Which side of the setpoint is abnormal.</summary>
public enum AlarmDirection
{
    /// <summary>In alarm at value ≥ setpoint; clears below setpoint − deadband.</summary>
    High,

    /// <summary>In alarm at value ≤ setpoint; clears above setpoint + deadband.</summary>
    Low,
}

/// <summary>
/// One alarm of one silo: what it watches, when it is in alarm, and what the operator is told.
/// Built from the plant's limits by <see cref="AlarmDefinitions.ForSilo"/>; plain data (System.Text.Json).
/// </summary>
/// <param name="Id">Unique within the engine: "site/silo/name".</param>
/// <param name="Condition">Key of the <see cref="ConditionValue"/> it watches (<see cref="ConditionKeys"/>).</param>
/// <param name="Priority">1 (highest) to 4.</param>
/// <param name="Deadband">In the condition's unit: the value must retreat this far past the setpoint to clear.</param>
/// <param name="OnDelay">The condition must hold this long before the alarm activates.</param>
/// <param name="OffDelay">The condition must be clear this long before the alarm returns to normal.</param>
/// <param name="Latching">Stays (latched) after the condition clears until an operator resets it.</param>
/// <param name="EnabledIn">Discharge states in which it is evaluated; outside them it is suppressed by design. Null: always.</param>
/// <param name="Text">What the operator reads after the silo's name, with the caution (see <see cref="Message"/>).</param>
public sealed record AlarmDefinition(
    string Id,
    string SiteId,
    string SiloId,
    string Condition,
    string Unit,
    AlarmDirection Direction,
    double Setpoint,
    double Deadband,
    int Priority,
    TimeSpan OnDelay,
    TimeSpan OffDelay,
    bool Latching,
    IReadOnlyList<DischargeState>? EnabledIn,
    string Text)
{
    /// <summary>What the operator reads: "Silo {SiloId}: {Text}".</summary>
    public string Message => $"Silo {SiloId}: {Text}";
}

/// <summary>The value of one condition at one moment, with the silo's discharge state (for suppression by design).</summary>
/// <param name="Value">NaN when unknown (bad sensors, ring not resolved): the alarm holds its state and timers.</param>
/// <param name="Detail">Short context carried into a transition, e.g. "ring R1, direction 212°".</param>
public readonly record struct ConditionValue(string Condition, double Value, DischargeState SiloState, string Detail = "");

/// <summary>One change of an alarm's state: the journal entry and the published event.</summary>
/// <param name="Value">The condition's last known value; null when none yet.</param>
/// <param name="By">"system", or the user who acknowledged, shelved, reset or took it out of service.</param>
/// <param name="DuringFlood">True for activations inside an alarm flood: journal them, but publish the flood transition instead.</param>
public sealed record AlarmTransition(
    long TimestampMs,
    string AlarmId,
    string SiteId,
    string SiloId,
    string Condition,
    int Priority,
    AlarmStateName From,
    AlarmStateName To,
    double? Value,
    double Setpoint,
    string Unit,
    string By,
    string Comment,
    string Message,
    bool DuringFlood = false);

/// <summary>The present state of one alarm, for the retained alarms topic and the snapshot.</summary>
/// <param name="InAlarm">The condition (after its delays) is in alarm now.</param>
/// <param name="Acknowledged">The last activation has been acknowledged.</param>
/// <param name="ShelvedUntilMs">Expiry of a shelve, or null.</param>
public sealed record AlarmState(
    string AlarmId,
    string SiteId,
    string SiloId,
    string Condition,
    int Priority,
    AlarmStateName State,
    bool InAlarm,
    bool Acknowledged,
    double? Value,
    double Setpoint,
    string Unit,
    long SinceMs,
    long? ActivatedMs,
    long? ShelvedUntilMs,
    string ShelvedBy,
    string ShelveReason,
    bool OutOfService,
    string Message);

/// <summary>Every alarm's state, for a restart. Plain data.</summary>
public sealed record AlarmSnapshot(int Version, long TakenMs, IReadOnlyList<AlarmState> States)
{
    public const int CurrentVersion = 1;
}

/// <summary>Condition keys shared by the wall watch (producer) and the alarm definitions (consumer).</summary>
public static class ConditionKeys
{
    public static string AsymmetryA1(string siloId, string ring) => $"{siloId}/asymmetry-a1/{ring}";

    public static string AsymmetryA2(string siloId, string ring) => $"{siloId}/asymmetry-a2/{ring}";

    public static string Excess(string siloId, string ring) => $"{siloId}/excess/{ring}";

    public static string Overfill(string siloId) => $"{siloId}/overfill";

    public static string SupportOverload(string siloId) => $"{siloId}/support-overload";

    public static string IdleMassChange(string siloId) => $"{siloId}/idle-mass-change";

    public static string SensorBad(string siloId, string sensorId) => $"{siloId}/sensor-bad/{sensorId}";

    /// <summary>Condition of the flood summary of a site (not a configured alarm).</summary>
    public static string Flood(string siteId) => $"{siteId}/alarm-flood";
}
