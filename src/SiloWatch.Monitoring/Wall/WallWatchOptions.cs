using System.ComponentModel.DataAnnotations;

namespace SiloWatch.Monitoring.Wall;

/// <summary>
/// Ring analysis, discharge state and wall-load index settings, shared by every silo. Bound from the
/// <see cref="SectionName"/> section. Each default is stated on its property. The alarm limits
/// themselves are per silo (Plant AlarmLimits), set by the structural engineer.
/// </summary>
public sealed class WallWatchOptions
{
    public const string SectionName = "WallWatch";

    // ---- ring analysis ----

    /// <summary>Highest circumferential harmonic fitted, n_max. Default 2 (needs 5 good gauges).</summary>
    [Range(0, 16)]
    public int MaxHarmonic { get; set; } = 2;

    /// <summary>Largest condition number of a ring's design matrix for an order to be fitted. Default 20 (equal spacing gives √2).</summary>
    [Range(1.0, 1e6)]
    public double MaxConditionNumber { get; set; } = 20;

    /// <summary>A gauge value older than this is not used. Default 5 s.</summary>
    public TimeSpan GaugeStaleAfter { get; set; } = TimeSpan.FromSeconds(5);

    /// <summary>
    /// Use gauges of uncertain quality. Default false: an uncertain gauge is a held spike or a gauge whose paired
    /// temperature is missing (then uncompensated, so it jumps by its thermal output × (T − T_ref) against the
    /// baseline, an n = 1 pattern the benchmark showed raising a false asymmetry). Bad ones are never used.
    /// </summary>
    public bool UseUncertainGauges { get; set; }

    /// <summary>A ring is assessed only while the contents cover it by at least this depth, m. Default 0.5.</summary>
    [Range(0.0, 100.0)]
    public double MinCoverDepthM { get; set; } = 0.5;

    // ---- discharge state ----

    /// <summary>Rate beyond which a fill or discharge starts, kg/s. Default 2.</summary>
    [Range(0.0, 1e6)]
    public double EnterRateKgPerS { get; set; } = 2;

    /// <summary>Rate below which the contents count as quiet (hysteresis), kg/s. Default 0.8.</summary>
    [Range(0.0, 1e6)]
    public double ExitRateKgPerS { get; set; } = 0.8;

    /// <summary>Time the start evidence must hold before a fill or discharge is confirmed. Default 3 s.</summary>
    public TimeSpan StateOnsetDelay { get; set; } = TimeSpan.FromSeconds(3);

    /// <summary>Time quiet must hold before a fill or discharge ends into settling. Default 15 s.</summary>
    public TimeSpan StateEndDelay { get; set; } = TimeSpan.FromSeconds(15);

    /// <summary>Time in settling before idle. Default 2 min.</summary>
    public TimeSpan SettlingTime { get; set; } = TimeSpan.FromMinutes(2);

    /// <summary>No state is left before this. Default 5 s.</summary>
    public TimeSpan MinStateDuration { get; set; } = TimeSpan.FromSeconds(5);

    /// <summary>An outlet signal older than this is ignored and the rate decides again. Default 30 s.</summary>
    public TimeSpan OutletSignalTimeout { get; set; } = TimeSpan.FromSeconds(30);

    // ---- baseline ----

    /// <summary>The baseline of a discharge is averaged over this window before the onset. Default 10 s.</summary>
    public TimeSpan BaselineWindow { get; set; } = TimeSpan.FromSeconds(10);

    /// <summary>
    /// The baseline window ends this long before the detected onset, because the rate estimate confirms a
    /// discharge some seconds after it began. Default 10 s.
    /// </summary>
    public TimeSpan BaselineLead { get; set; } = TimeSpan.FromSeconds(10);

    // ---- thermal ----

    /// <summary>
    /// Residual apparent strain per K of every gauge after its own compensation, microstrain/K: the prior
    /// the learned value starts from. Default 0 (the configured thermal output is taken as right).
    /// </summary>
    [Range(-100.0, 100.0)]
    public double ThermalResidualPriorMicroPerK { get; set; }

    /// <summary>Learn each gauge's residual thermal sensitivity while the silo is idle. Default true.</summary>
    public bool LearnThermalSensitivity { get; set; } = true;

    /// <summary>Time constant of that learning. Default 12 h.</summary>
    public TimeSpan ThermalLearningTime { get; set; } = TimeSpan.FromHours(12);

    /// <summary>Weight of the prior, as a temperature variance (K²) seen: the learned slope takes over as the gauge's own variance exceeds it. Default 0.5.</summary>
    [Range(0.0, 1e4)]
    public double ThermalPriorWeightK2 { get; set; } = 0.5;

    /// <summary>Temperature variance (K²) the learning needs before it counts as learned (reported). Default 4.</summary>
    [Range(0.0, 1e4)]
    public double ThermalMinVarianceK2 { get; set; } = 4;

    /// <summary>Bound on the learned residual, microstrain/K. Default 15.</summary>
    [Range(0.0, 1000.0)]
    public double ThermalMaxResidualMicroPerK { get; set; } = 15;

    // ---- indices ----

    /// <summary>
    /// Smallest mean load (load-sense microstrain) the ratios are divided by, as a fraction of the expected
    /// discharge mean at the ring: keeps A1/A0 finite near empty. Default 0.25.
    /// </summary>
    [Range(0.0, 10.0)]
    public double MinMeanFraction { get; set; } = 0.25;

    /// <summary>Absolute floor of that denominator, microstrain. Default 5.</summary>
    [Range(0.0, 1e4)]
    public double MinMeanMicro { get; set; } = 5;

    // ---- other conditions ----

    /// <summary>Window of the mass change judged while idle. Default 60 s.</summary>
    public TimeSpan IdleMassWindow { get; set; } = TimeSpan.FromSeconds(60);
}
