using MathNet.Numerics.Distributions;
using MathNet.Numerics.LinearAlgebra;

namespace SiloWatch.Monitoring;

/// <summary>
/// One moment of a ring-gain calibration of a floor-weighed silo: what the floor cells and the base
/// ring carried (the ring at gain 1) while the contents were known by other means.
/// </summary>
/// <param name="FloorLoadKn">Net load on the floor cells, kN.</param>
/// <param name="RingWallLoadKn">Wall load from the base ring at gain 1 (U·n_z, compression positive), kN.</param>
/// <param name="BelowRingKn">Wall friction between the ring and the transition (mechanics model), kN.</param>
/// <param name="KnownMassKg">Contents by an independent record (delivery tickets, a period of full weighing), kg.</param>
public sealed record RingGainPoint(long TimestampMs, double FloorLoadKn, double RingWallLoadKn, double BelowRingKn, double KnownMassKg);

/// <summary>Result of a ring-gain fit: the gain with its 95 % confidence interval and the residuals. Apply only after a person confirmed it.</summary>
/// <param name="ResidualsKn">Known total minus fitted total at each point, kN.</param>
public sealed record RingGainFit(
    double Gain,
    double GainLow95,
    double GainHigh95,
    double ResidualRmsKn,
    IReadOnlyList<double> ResidualsKn,
    int Points,
    string Note)
{
    /// <summary>Relative σ of the gain (from the 95 % interval).</summary>
    public double GainRelativeStd => (GainHigh95 - GainLow95) / (2 * 1.959963984540054 * Gain);

    /// <summary>
    /// The calibration to apply, recorded with who confirmed it and when. The solid's calibration in
    /// force (<paramref name="current"/>) is kept: the ring gain is added to it.
    /// </summary>
    public InventoryCalibration Confirm(string by, long nowUnixMs, InventoryCalibration? current = null, string note = "")
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(by);
        var text = string.IsNullOrEmpty(note) ? Note : note;
        var relStd = Math.Max(GainRelativeStd, RingGainCalibrator.MinimumRelativeStd);
        return current is null
            ? new InventoryCalibration(null, null, null, null, nowUnixMs, by, text, Gain, relStd)
            : current with { ConfirmedMs = nowUnixMs, ConfirmedBy = by, Note = current.Note + "; " + text, RingGain = Gain, RingGainRelativeStd = relStd };
    }
}

/// <summary>
/// Fits the gain of a floor-weighed silo's base wall ring (the product of modulus, wall thickness and
/// gauge factor as installed, which the plant definition knows only to a few percent) against a period
/// when the total is known: known·g = floor + gain·ring + friction below the ring. Weighted linear
/// least squares through the origin, solved by QR with MathNet; the 95 % interval from the standard
/// error with Student's t on n − 1 degrees of freedom, the residual scatter included. Returned, never
/// applied: a person confirms it (<see cref="RingGainFit.Confirm"/>), and the monitor applies it.
/// </summary>
public static class RingGainCalibrator
{
    /// <summary>Smallest relative σ a confirmed gain states: the ring's mean stands for the whole wall only so well [D: a choice].</summary>
    public const double MinimumRelativeStd = 0.005;

    /// <param name="floorLoadStdKn">σ of one floor-load point, kN.</param>
    /// <param name="massStdKg">σ of one known mass, kg.</param>
    public static RingGainFit Fit(IReadOnlyList<RingGainPoint> points, double floorLoadStdKn, double massStdKg)
    {
        ArgumentNullException.ThrowIfNull(points);
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(floorLoadStdKn);
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(massStdKg);
        var usable = points
            .Where(p => double.IsFinite(p.FloorLoadKn) && double.IsFinite(p.RingWallLoadKn) && double.IsFinite(p.BelowRingKn) && p.KnownMassKg > 0)
            .ToList();
        if (usable.Count < 3)
        {
            throw new ArgumentException($"a ring-gain fit needs at least 3 points with a known mass and a ring reading; got {usable.Count}", nameof(points));
        }

        var knPerKg = Mechanics.Units.StandardGravity / 1000.0;
        var largestRing = usable.Max(p => p.RingWallLoadKn);
        var largestTotal = usable.Max(p => p.KnownMassKg) * knPerKg;
        if (!(largestRing > 0.1 * largestTotal))
        {
            throw new ArgumentException("the wall ring carries under a tenth of the known total at every point: the fill must rise well into the silo for its gain to show", nameof(points));
        }

        // Row i, divided by its σ: (known·g − floor − below) = gain · ring.
        var sigma = usable.Select(p => Math.Sqrt((floorLoadStdKn * floorLoadStdKn) + Math.Pow(massStdKg * knPerKg, 2) + Math.Pow(0.1 * p.BelowRingKn, 2))).ToArray();
        var x = Matrix<double>.Build.Dense(usable.Count, 1, (i, _) => usable[i].RingWallLoadKn / sigma[i]);
        var y = Vector<double>.Build.Dense(usable.Count, i => ((usable[i].KnownMassKg * knPerKg) - usable[i].FloorLoadKn - usable[i].BelowRingKn) / sigma[i]);
        var gain = x.QR().Solve(y)[0];

        var weightedResiduals = y - (x * Vector<double>.Build.Dense(1, gain));
        var dof = usable.Count - 1;
        // Standard error: (XᵀX)⁻¹ scaled by the reduced χ², never below the stated point σ (a too-good scatter proves nothing more).
        var reducedChi2 = Math.Max(1.0, weightedResiduals.DotProduct(weightedResiduals) / dof);
        var se = Math.Sqrt(x.TransposeThisAndMultiply(x).Inverse()[0, 0] * reducedChi2);
        var t = StudentT.InvCDF(0, 1, dof, 0.975);
        var residuals = usable.Select((p, i) => (p.KnownMassKg * knPerKg) - p.FloorLoadKn - p.BelowRingKn - (gain * p.RingWallLoadKn)).ToArray();
        var rms = Math.Sqrt(residuals.Sum(r => r * r) / residuals.Length);
        return new RingGainFit(
            gain,
            gain - (t * se),
            gain + (t * se),
            rms,
            residuals,
            usable.Count,
            FormattableString.Invariant($"base ring gain fitted to {usable.Count} known totals ({usable.Min(p => p.KnownMassKg) / 1000:0.#}..{usable.Max(p => p.KnownMassKg) / 1000:0.#} t)"));
    }
}
