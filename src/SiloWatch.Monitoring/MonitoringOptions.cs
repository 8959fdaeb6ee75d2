using System.ComponentModel.DataAnnotations;

namespace SiloWatch.Monitoring;

/// <summary>
/// Sample quality and inventory estimation settings, shared by every silo. Bound from the
/// <see cref="SectionName"/> section. Each default is stated on its property.
/// </summary>
public sealed class MonitoringOptions
{
    public const string SectionName = "Monitoring";

    // ---- sample quality ----

    /// <summary>A sensor is stale when no sample arrived within this multiple of its expected period. Default 3.</summary>
    [Range(1.0, 1000.0)]
    public double StaleMultiple { get; set; } = 3.0;

    /// <summary>A bridge signal that has not moved by more than <see cref="StuckToleranceMvPerV"/> over this window is stuck. Default 60 s.</summary>
    public TimeSpan StuckWindow { get; set; } = TimeSpan.FromSeconds(60);

    /// <summary>Largest movement of a bridge signal still counted as "not moving", mV/V. Default 0 (bit-identical values: a live 24-bit converter always shows noise).</summary>
    [Range(0.0, 1.0)]
    public double StuckToleranceMvPerV { get; set; }

    /// <summary>Stuck window for temperature sensors, which legitimately hold a value for minutes. Default 2 h.</summary>
    public TimeSpan TemperatureStuckWindow { get; set; } = TimeSpan.FromHours(2);

    /// <summary>Values the spike detector's median and MAD are taken over. Default 15.</summary>
    [Range(5, 255)]
    public int SpikeWindowSamples { get; set; } = 15;

    /// <summary>Robust z-score (|x − median| / (1.4826·MAD)) above which a sample is a spike. Default 8.</summary>
    [Range(2.0, 1000.0)]
    public double SpikeThreshold { get; set; } = 8.0;

    /// <summary>Smallest noise σ the spike detector assumes for bridge signals, mV/V. Default 0.00002 (10 ppm of a 2 mV/V span).</summary>
    [Range(0.0, 1.0)]
    public double SpikeSigmaFloorMvPerV { get; set; } = 2e-5;

    /// <summary>Smallest noise σ the spike detector assumes for temperatures, K. Default 0.2.</summary>
    [Range(0.0, 100.0)]
    public double SpikeSigmaFloorK { get; set; } = 0.2;

    /// <summary>A value within this fraction of the configured range from either end is taken as a saturated converter. Default 0.01.</summary>
    [Range(0.0, 0.5)]
    public double SaturationMarginFraction { get; set; } = 0.01;

    /// <summary>Converter input range, ± mV at the bridge output (signal × excitation); 0 when unknown. Default 0.</summary>
    [Range(0.0, 10000.0)]
    public double ConverterInputRangeMv { get; set; }

    /// <summary>Absolute change of a cell's load share (0.04 = four points) that counts as drift. Default 0.04.</summary>
    [Range(0.001, 1.0)]
    public double DriftShareTolerance { get; set; } = 0.04;

    /// <summary>
    /// A cell whose share jumps by more than this multiple of <see cref="DriftShareTolerance"/> while the
    /// others move much less is left out and replaced by its share until it agrees again. Default 3.
    /// </summary>
    [Range(1.0, 100.0)]
    public double DriftExcludeFactor { get; set; } = 3;

    /// <summary>Time constant of the learned load-share pattern. Default 6 h.</summary>
    public TimeSpan DriftLearningTime { get; set; } = TimeSpan.FromHours(6);

    /// <summary>Time constant of the recent load share compared with the pattern. Default 30 s.</summary>
    public TimeSpan DriftSmoothingTime { get; set; } = TimeSpan.FromSeconds(30);

    /// <summary>Shares are judged only above this fraction of the silo's capacity mass. Default 0.1.</summary>
    [Range(0.0, 1.0)]
    public double DriftMinLoadFraction { get; set; } = 0.1;

    // ---- load cell error budget ----

    /// <summary>Combined error of one load cell, % of rated output (OIML R60 class C3 is about 0.02 [M]). Default 0.02.</summary>
    [Range(0.0, 10.0)]
    public double LoadCellCombinedErrorPctRo { get; set; } = 0.02;

    /// <summary>Span uncertainty of an installed cell after in-situ calibration (mounting, side loads), % of reading. Default 0.05.</summary>
    [Range(0.0, 20.0)]
    public double LoadCellSpanUncertaintyPct { get; set; } = 0.05;

    /// <summary>Zero stability of an installed cell: σ of its zero grows by this per hour since the tare, % of rated output. Default 0.01.</summary>
    [Range(0.0, 10.0)]
    public double LoadCellZeroDriftPctRoPerHour { get; set; } = 0.01;

    /// <summary>Ceiling of that zero-drift σ, % of rated output. Default 0.1.</summary>
    [Range(0.0, 10.0)]
    public double LoadCellZeroDriftMaxPctRo { get; set; } = 0.1;

    /// <summary>σ of a strain gauge's thermal output against its configured value, % of it (bonding, wall material). Default 12.</summary>
    [Range(0.0, 100.0)]
    public double GaugeThermalOutputUncertaintyPct { get; set; } = 12;

    /// <summary>
    /// Fuse a floor-weighed silo's base ring that was never tared, its gauges' configured no-load output
    /// (ZeroOffsetMvPerV) taken as zero, with <see cref="GaugeZeroUncertaintyMicro"/>; the estimate then says
    /// "wall ring not tared". Default false: on a concrete wall one microstrain of ring mean is some 20 t
    /// (U·E·t), so an untared ring's slow errors (zeros, thermal output left after compensation) move the fused
    /// mass by tonnes within minutes on a sunny day, which reads as a fill or discharge (the idle mass-change
    /// alarm). Tare the silo when empty to use the ring; with it, the floor load's K·μ uncertainty near full is
    /// what the ring removes (scenario-accuracy: C1 in the eccentric discharge 15 % of capacity RMS untared-off,
    /// 0.24 % with the untared ring fused).
    /// </summary>
    public bool FuseUntaredRing { get; set; }

    /// <summary>
    /// σ of an untared wall gauge's zero against its configured no-load output (ZeroOffsetMvPerV), microstrain,
    /// independent from gauge to gauge: bonding, creep and long-term zero shift since installation. Default 5
    /// [a choice; bonded gauges' zero stability of a few microstrain over months is from memory, M?].
    /// </summary>
    [Range(0.0, 1000.0)]
    public double GaugeZeroUncertaintyMicro { get; set; } = 5;

    /// <summary>
    /// σ of the apparent axial strain of a wall gauge per K it is warmer than its ring's coolest gauge (sun on one
    /// side bows the restrained shell, DOMAIN.md §3), microstrain/K, common to the ring's gauges; not compensated, so it widens the ring's
    /// error. 0 leaves it out. Default 2 [a choice; its size depends on the shell and its restraint].
    /// </summary>
    [Range(0.0, 100.0)]
    public double GaugeSunBowMicroPerK { get; set; } = 2;

    /// <summary>σ of the configured structure mass while no commanded tare exists, % of it. Default 3.</summary>
    [Range(0.0, 100.0)]
    public double StructureMassUncertaintyPct { get; set; } = 3.0;

    /// <summary>
    /// Partial weighing without leg or wall gauges: σ of the contents' (and wind's) off-centre ratio e/R
    /// in each horizontal direction. Default 0.05.
    /// </summary>
    [Range(0.0, 1.0)]
    public double EccentricityRatioStd { get; set; } = 0.05;

    // ---- floor-only weighing ----

    /// <summary>σ of ln(K·μ) for the floor-load inversion; 0 derives it from the material's a_K and a_μ
    /// (characteristic values taken as 5 %/95 % fractiles). Default 0.</summary>
    [Range(0.0, 2.0)]
    public double KMuRelativeStd { get; set; }

    /// <summary>σ of the bulk unit weight, relative; 0 derives it from the material's range (uniform). Default 0.</summary>
    [Range(0.0, 1.0)]
    public double UnitWeightRelativeStd { get; set; }

    /// <summary>d ln(mass)/d ln(floor load) above which the inversion is flagged poorly conditioned. Default 2.</summary>
    [Range(1.0, 1000.0)]
    public double ConditioningLimit { get; set; } = 2.0;

    /// <summary>Relative σ of the wall-ring axial force (gauge factor, modulus, thickness, bonding). Default 0.05.</summary>
    [Range(0.0, 1.0)]
    public double WallRingRelativeStd { get; set; } = 0.05;

    // ---- estimator ----

    /// <summary>Acceleration noise q of the mass/rate filter, kg²/s³. Default 0.5.</summary>
    [Range(0.0, 1e9)]
    public double ProcessNoiseKg2PerS3 { get; set; } = 0.5;

    /// <summary>σ of the rate before any data, kg/s. Default 20.</summary>
    [Range(0.0, 1e6)]
    public double InitialRateStdKgPerS { get; set; } = 20;

    /// <summary>Normalised innovation squared above which the filter treats a step as a change of rate. Default 16.</summary>
    [Range(0.0, 1e6)]
    public double ManeuverGate { get; set; } = 16;

    /// <summary>Factor the process noise is multiplied by on such a step. Default 400.</summary>
    [Range(1.0, 1e9)]
    public double ManeuverGain { get; set; } = 400;

    /// <summary>Time to empty or full is given only for rates above this, kg/s (and clear of zero at 95 %). Default 0.2.</summary>
    [Range(0.0, 1e6)]
    public double MinRateKgPerS { get; set; } = 0.2;

    /// <summary>Stated mass σ above this fraction of capacity makes an estimate uncertain ("wide uncertainty") whatever the arrangement. Default 0.05.</summary>
    [Range(0.0, 10.0)]
    public double MaxConfidentStdFraction { get; set; } = 0.05;

    // ---- zero tracking ----

    /// <summary>Automatic zero tracking: slowly pulls a near-empty, still reading back to zero. Default false (off).</summary>
    public bool ZeroTrackingEnabled { get; set; }

    /// <summary>Band around zero within which zero tracking acts, % of capacity mass. Default 0.5.</summary>
    [Range(0.0, 10.0)]
    public double ZeroTrackingBandPct { get; set; } = 0.5;

    /// <summary>Time constant of zero tracking. Default 10 min.</summary>
    public TimeSpan ZeroTrackingTime { get; set; } = TimeSpan.FromMinutes(10);
}
