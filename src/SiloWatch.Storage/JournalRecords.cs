namespace SiloWatch.Storage;

/// <summary>One alarm state change (ISA-18.2 style states as text, e.g. "Normal" to "Unacknowledged").</summary>
public sealed record AlarmTransitionRecord(
    long TimestampMs,
    string SiteId,
    string SiloId,
    string AlarmId,
    string FromState,
    string ToState,
    int Priority,
    double Value,
    double Limit,
    string Message,
    string? User = null);

/// <summary>
/// One discharge event. <see cref="EndedMs"/> is null while it is in progress. Per-ring peaks,
/// expected loads and the like go in <see cref="DetailsJson"/>, owned by the code that measures them.
/// </summary>
public sealed record DischargeEventRecord
{
    /// <summary>Set by <see cref="Journal.AppendEvent"/>; 0 before.</summary>
    public long Id { get; init; }

    public required string SiteId { get; init; }

    public required string SiloId { get; init; }

    public required long StartedMs { get; init; }

    public long? EndedMs { get; init; }

    public double MassAtStartKg { get; init; }

    public double MassOutKg { get; init; }

    public double MeanRateKgPerS { get; init; }

    public double PeakRateKgPerS { get; init; }

    /// <summary>Largest A1/A0 of any ring during the event.</summary>
    public double MaxAsymmetryRatio { get; init; }

    /// <summary>Direction of the first harmonic at that moment, degrees from the silo's reference mark.</summary>
    public double AsymmetryDirectionDeg { get; init; }

    public string DetailsJson { get; init; } = "{}";

    public bool InProgress => EndedMs is null;
}

/// <summary>A change of one calibration parameter of a sensor.</summary>
public sealed record CalibrationRecord(
    long TimestampMs,
    string SiteId,
    string SiloId,
    string SensorId,
    string Parameter,
    double OldValue,
    double NewValue,
    string Method,
    string? User = null,
    string? Note = null);

/// <summary>A tare (zeroing) of a silo's weighing.</summary>
public sealed record TareRecord(
    long TimestampMs,
    string SiteId,
    string SiloId,
    double TareKg,
    double PreviousTareKg,
    string? User = null,
    string? Reason = null);

/// <summary>State saved for a restart: one JSON document per silo and kind (tare, calibration, alarms, event).</summary>
public sealed record SnapshotRecord(string SiloKey, string Kind, string Json, long UpdatedMs);
