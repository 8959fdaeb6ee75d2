using SiloWatch.Monitoring.Alarms;
using SiloWatch.Plant;

namespace SiloWatch.Monitoring.Wall;

/// <summary>
/// One gauge ring at one moment.
/// <para>
/// Sign conventions: <see cref="StrainMicro"/> is as measured (tension positive). Everything in the
/// "load sense" is positive for the load the ring carries: axial compression for an axial ring, hoop
/// tension for a hoop ring; the direction of a load-sense harmonic points to where that load is highest.
/// </para>
/// </summary>
/// <param name="ResolvedOrder">Highest harmonic the good gauges resolve now (−1: none good).</param>
/// <param name="StrainMicro">Harmonics n = 0..resolved of the present strain (gauge zero removed when tared).</param>
/// <param name="ForceKnPerM">The same as membrane force per metre, load sense (axial n_z compression positive, hoop n_θ tension positive).</param>
/// <param name="ChangeMicro">Harmonics of the change since the discharge baseline, load sense, thermally corrected; empty outside a discharge.</param>
/// <param name="ChangeForceKnPerM">That change as membrane force, ≈ E·t·Δε (the Poisson coupling of the change is neglected).</param>
/// <param name="TemperatureChangeK">Harmonics of the gauge temperatures' change since the baseline (the sun shows as n = 1); empty outside a discharge.</param>
/// <param name="ExpectedMeanMicro">Expected mean load-sense strain at the ring for the present mass, discharging (Mechanics); NaN when not modelled.</param>
/// <param name="A1Ratio">First-harmonic amplitude of the change over the mean load (see <see cref="WallWatch"/>); NaN when not assessed.</param>
/// <param name="AsymmetryDirectionDeg">Direction of the first harmonic of the change: where the wall load rose most, degrees from the reference mark.</param>
/// <param name="PeakOverMean">Highest gauge load over the ring's mean load (during a discharge).</param>
/// <param name="MeasuredOverExpected">Highest gauge load over the expected discharge load at the ring.</param>
public sealed record RingAssessment(
    string Ring,
    SensorKind Kind,
    double HeightM,
    int GoodGauges,
    int Gauges,
    int ResolvedOrder,
    double ConditionNumber,
    IReadOnlyList<Harmonic> StrainMicro,
    IReadOnlyList<Harmonic> ForceKnPerM,
    IReadOnlyList<Harmonic> ChangeMicro,
    IReadOnlyList<Harmonic> ChangeForceKnPerM,
    IReadOnlyList<Harmonic> TemperatureChangeK,
    double ExpectedMeanMicro,
    double A1Ratio,
    double A2Ratio,
    double AsymmetryDirectionDeg,
    double PeakOverMean,
    double MeasuredOverExpected,
    string Note);

/// <summary>Peak indices of one ring over a discharge.</summary>
public sealed record RingPeak(string Ring, double MaxA1Ratio, double DirectionAtMaxDeg, double MaxA2Ratio, double MaxMeasuredOverExpected, double MaxPeakOverMean);

/// <summary>A finished discharge, for the event record: from the onset to the end of the flow (entry into settling); the rate is negative.</summary>
public sealed record DischargeSummary(
    string SiteId,
    string SiloId,
    long OnsetMs,
    long EndMs,
    double MassAtStartKg,
    double MassAtEndKg,
    double MeanRateKgPerS,
    IReadOnlyList<RingPeak> Rings);

/// <summary>What <see cref="WallWatch.Evaluate"/> returns once a second: rings, discharge state, indices and the alarm conditions.</summary>
/// <param name="StateChange">The discharge state change of this evaluation, or null.</param>
/// <param name="FinishedDischarge">Set once, when a discharge has settled (or a fill followed it).</param>
/// <param name="Conditions">One value per alarm condition of the silo (keys of <see cref="ConditionKeys"/>), for <see cref="AlarmEngine.Evaluate"/>.</param>
public sealed record WallAssessment(
    string SiteId,
    string SiloId,
    long TimestampMs,
    DischargeState State,
    long? DischargeOnsetMs,
    DischargeStateChange? StateChange,
    DischargeSummary? FinishedDischarge,
    double MassKg,
    bool ThermalLearned,
    IReadOnlyList<RingAssessment> Rings,
    IReadOnlyList<ConditionValue> Conditions);

/// <summary>What a restart needs to resume a silo's wall watch: discharge state, baseline, learned thermal sensitivities, gauge zeros.</summary>
public sealed record WallSnapshot(
    int Version,
    string SiteId,
    string SiloId,
    long TakenMs,
    DischargeState State,
    long SinceMs,
    long OnsetMs,
    double? BaselineMassKg,
    IReadOnlyList<GaugeSnapshot> Gauges)
{
    public const int CurrentVersion = 1;
}

/// <param name="BaselineStrainMicro">Null when the gauge had no baseline.</param>
/// <param name="ThermalVarianceK2">Temperature variance behind the learned residual (its weight on restore).</param>
/// <param name="ZeroMicro">Gauge zero from a tare, null when none.</param>
public sealed record GaugeSnapshot(string SensorId, double? BaselineStrainMicro, double? BaselineTemperatureC, double ThermalResidualMicroPerK, double ThermalVarianceK2, double? ZeroMicro);
