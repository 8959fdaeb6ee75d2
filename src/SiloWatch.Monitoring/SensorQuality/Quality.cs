using System.Text;

namespace SiloWatch.Monitoring;

/// <summary>Quality of a sample or an estimate. Ordered: a larger value is worse.</summary>
public enum Quality
{
    Good = 0,
    Uncertain = 1,
    Bad = 2,
}

/// <summary>Why a sample or an estimate is not good. Several may hold at once.</summary>
[Flags]
public enum QualityFlags
{
    None = 0,

    /// <summary>No sample received yet.</summary>
    NoData = 1 << 0,

    /// <summary>No sample within the stale multiple of the expected period.</summary>
    Stale = 1 << 1,

    /// <summary>Value outside the configured physical range: rejected.</summary>
    OutOfRange = 1 << 2,

    /// <summary>Value at the ends of the converter's range: clipped, not to be trusted.</summary>
    Saturated = 1 << 3,

    /// <summary>No variation over the stuck window: a frozen sensor or gateway.</summary>
    Stuck = 1 << 4,

    /// <summary>Robust z-score against the recent median and MAD above the threshold.</summary>
    Spike = 1 << 5,

    /// <summary>Load share left its learned pattern against the other cells of the silo.</summary>
    Drift = 1 << 6,

    /// <summary>The paired temperature sensor is unavailable: no temperature compensation.</summary>
    TemperatureMissing = 1 << 7,

    /// <summary>Load above the cell's rated capacity.</summary>
    OverCapacity = 1 << 8,

    // Estimate-level reasons.

    /// <summary>A failed cell was replaced by its expected share.</summary>
    Substituted = 1 << 9,

    /// <summary>No commanded tare yet: the configured structure mass is the tare estimate.</summary>
    NotTared = 1 << 10,

    /// <summary>Some supports are dummies: off-centre load or wind is an unmeasured error.</summary>
    PartialWeighing = 1 << 11,

    /// <summary>Floor-load inversion poorly conditioned: a small load error is a large mass error.</summary>
    PoorlyConditioned = 1 << 12,

    /// <summary>Floor-load inversion has no solution for the measured load with the model parameters.</summary>
    NoSolution = 1 << 13,

    /// <summary>Too few good sensors to estimate.</summary>
    InsufficientSensors = 1 << 14,

    /// <summary>Wall rings unavailable: the floor load alone carries the estimate.</summary>
    WallRingUnavailable = 1 << 15,

    /// <summary>Estimate held from an earlier measurement (prediction only).</summary>
    Held = 1 << 16,

    /// <summary>Mass outside the silo's physical range (below empty or above capacity).</summary>
    OutsidePhysicalRange = 1 << 17,

    /// <summary>The stated uncertainty is wide against the capacity, whatever the arrangement.</summary>
    WideUncertainty = 1 << 18,

    /// <summary>The wall ring was never tared: left out, or (MonitoringOptions.FuseUntaredRing) used with its gauges' configured no-load output as zero.</summary>
    WallRingNotTared = 1 << 19,
}

public static class QualityFlagsExtensions
{
    private const QualityFlags BadFlags = QualityFlags.NoData | QualityFlags.Stale | QualityFlags.OutOfRange
        | QualityFlags.Saturated | QualityFlags.Stuck | QualityFlags.NoSolution | QualityFlags.InsufficientSensors;

    /// <summary>The quality a set of reasons amounts to: any fault that makes the value unusable is bad, any other reason uncertain.</summary>
    public static Quality Severity(this QualityFlags flags) =>
        (flags & BadFlags) != 0 ? Quality.Bad : flags != QualityFlags.None ? Quality.Uncertain : Quality.Good;

    /// <summary>Short text for operators, e.g. "stale; temperature missing". Empty when good.</summary>
    public static string Describe(this QualityFlags flags)
    {
        if (flags == QualityFlags.None)
        {
            return "";
        }

        var sb = new StringBuilder();
        foreach (var flag in Enum.GetValues<QualityFlags>())
        {
            if (flag != QualityFlags.None && (flags & flag) != 0)
            {
                if (sb.Length > 0)
                {
                    sb.Append("; ");
                }

                sb.Append(Text(flag));
            }
        }

        return sb.ToString();
    }

    private static string Text(QualityFlags flag) => flag switch
    {
        QualityFlags.NoData => "no data",
        QualityFlags.Stale => "stale",
        QualityFlags.OutOfRange => "out of range",
        QualityFlags.Saturated => "converter saturated",
        QualityFlags.Stuck => "stuck",
        QualityFlags.Spike => "spike",
        QualityFlags.Drift => "drift against the other cells",
        QualityFlags.TemperatureMissing => "temperature missing, uncompensated",
        QualityFlags.OverCapacity => "above rated capacity",
        QualityFlags.Substituted => "failed cell replaced by its expected share",
        QualityFlags.NotTared => "not tared: structure mass used as tare",
        QualityFlags.PartialWeighing => "partial weighing: off-centre load not measured",
        QualityFlags.PoorlyConditioned => "floor-load inversion poorly conditioned",
        QualityFlags.NoSolution => "floor-load inversion has no solution",
        QualityFlags.InsufficientSensors => "too few good sensors",
        QualityFlags.WallRingUnavailable => "wall ring unavailable: floor load only",
        QualityFlags.Held => "held from the last measurement",
        QualityFlags.OutsidePhysicalRange => "outside the silo's physical range",
        QualityFlags.WideUncertainty => "wide uncertainty",
        QualityFlags.WallRingNotTared => "wall ring not tared",
        _ => flag.ToString(),
    };
}
