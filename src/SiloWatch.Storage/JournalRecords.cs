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
/// One discharge event. <see cref="EndedMs"/> is null while it is in progress. The headline numbers
/// are columns (the review filters on them); per-ring peaks, expected loads, alarms and data quality
/// go in <see cref="DetailsJson"/> (<see cref="DischargeEventDetails"/>), the capture of the silo's
/// series in its own table (<see cref="Journal.SaveCapture"/>).
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

    /// <summary>Largest A2/A0 of any ring during the event; NaN when not assessed.</summary>
    public double MaxA2Ratio { get; init; } = double.NaN;

    /// <summary>Largest peak-gauge-over-ring-mean of any ring; NaN when not assessed.</summary>
    public double MaxPeakOverMean { get; init; } = double.NaN;

    /// <summary>Largest highest-gauge-load over the expected discharge load of any ring; NaN when not assessed.</summary>
    public double MaxMeasuredOverExpected { get; init; } = double.NaN;

    /// <summary>Highest alarm priority raised during the event (1 is the highest), null when none was.</summary>
    public int? HighestPriority { get; init; }

    /// <summary>How many alarms were raised (went to unacknowledged) during the event.</summary>
    public int AlarmsRaised { get; init; }

    /// <summary>JSON of <see cref="DischargeEventDetails"/>; "{}" for events recorded before schema version 4 carried details.</summary>
    public string DetailsJson { get; init; } = "{}";

    public bool InProgress => EndedMs is null;
}

/// <summary>Filters of <see cref="Journal.QueryEvents(EventQuery)"/>; a null filter matches all.</summary>
/// <param name="FromMs">Events that end at or after this (or are in progress).</param>
/// <param name="ToMs">Events that start before this.</param>
/// <param name="HighestPriorityAtMost">Only events that raised an alarm of this priority or higher (1 highest).</param>
/// <param name="MinAsymmetryRatio">Only events whose largest A1/A0 reached this.</param>
public sealed record EventQuery(
    string? SiteId = null,
    string? SiloId = null,
    long FromMs = long.MinValue,
    long ToMs = long.MaxValue,
    int? HighestPriorityAtMost = null,
    double? MinAsymmetryRatio = null,
    bool FinishedOnly = false,
    int Limit = 10_000);

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
