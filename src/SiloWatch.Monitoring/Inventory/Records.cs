using SiloWatch.Plant;

namespace SiloWatch.Monitoring;

/// <summary>
/// Inventory of one silo at one moment, for publishing. Every number has a 95 % interval and the
/// estimate a quality with its reason; unknown values are NaN (never a confident-looking zero).
/// </summary>
/// <param name="Method">How the mass was obtained: "all-supports", "some-supports", "floor-janssen", "floor+wall-rings" or "none".</param>
public sealed record InventoryEstimate(
    string SiteId,
    string SiloId,
    long TimestampMs,
    double MassKg,
    double MassLow95Kg,
    double MassHigh95Kg,
    double LevelM,
    double LevelLow95M,
    double LevelHigh95M,
    double VolumeM3,
    double PercentFull,
    double RateKgPerS,
    double RateLow95KgPerS,
    double RateHigh95KgPerS,
    double? TimeToEmptyS,
    double? TimeToFullS,
    Quality Quality,
    string QualityReason,
    string Method);

/// <summary>Last converted value of one sensor, with its raw value and quality.</summary>
/// <param name="Value">In <paramref name="Unit"/>: kN for load cells (gross, before tare), microstrain for strain gauges (temperature-compensated, before tare), degC for temperatures. NaN before the first good sample.</param>
/// <param name="RawValue">The last value received, in <paramref name="RawUnit"/> (the sensor's transmitted unit).</param>
public sealed record SensorReading(
    string SensorId,
    SensorKind Kind,
    long TimestampMs,
    double Value,
    string Unit,
    double RawValue,
    string RawUnit,
    Quality Quality,
    string QualityReason);

/// <summary>One sensor's value at a tare, in its engineering unit (kN or microstrain).</summary>
public sealed record TareValue(string SensorId, double Value, string Unit);

/// <summary>A commanded tare: when, by whom, and the value of every weighing cell and wall gauge at that moment.</summary>
/// <param name="MassBeforeKg">The inventory the silo showed just before the tare (what the tare removed).</param>
public sealed record TareRecord(
    string SiteId,
    string SiloId,
    long TimestampMs,
    string By,
    IReadOnlyList<TareValue> Values,
    double MassBeforeKg);

/// <summary>
/// Confirmed calibration of the bulk solid for one silo (from <see cref="InventoryCalibrator"/>, applied by
/// <see cref="SiloMonitor.ApplyCalibration"/>). A null value keeps the material library's.
/// </summary>
/// <param name="UnitWeightRelativeStd">σ of the fitted unit weight, relative.</param>
/// <param name="KMuRelativeStd">σ of the fitted K·μ, relative.</param>
/// <param name="RingGain">Factor on the base ring's wall load (modulus, thickness, gauge factor, bonding as installed), from <see cref="RingGainCalibrator"/>; null keeps 1.</param>
/// <param name="RingGainRelativeStd">σ of the fitted ring gain, relative.</param>
/// <param name="FloorLoadResidualKn">RMS of the K·μ fit's floor-load residuals, kN: how far the model's curve stays from the plant's; kept as a floor-load error.</param>
public sealed record InventoryCalibration(
    double? UnitWeightKnM3,
    double? UnitWeightRelativeStd,
    double? KMu,
    double? KMuRelativeStd,
    long ConfirmedMs,
    string ConfirmedBy,
    string Note,
    double? RingGain = null,
    double? RingGainRelativeStd = null,
    double? FloorLoadResidualKn = null);

/// <summary>What a restart needs to resume a silo's inventory: tare, learned load shares and calibration. Plain data: serialisable as is.</summary>
public sealed record MonitorSnapshot(
    int Version,
    string SiteId,
    string SiloId,
    long TakenMs,
    TareRecord? Tare,
    IReadOnlyList<double>? LoadShares,
    InventoryCalibration? Calibration)
{
    public const int CurrentVersion = 1;
}
