using MathNet.Numerics.Distributions;
using MathNet.Numerics.LinearAlgebra;
using MathNet.Numerics.Optimization;
using SiloWatch.Mechanics;

namespace SiloWatch.Monitoring;

/// <summary>One moment of a calibration fill: the contents' floor (or hopper) load and the known contents.</summary>
/// <param name="FloorLoadKn">Net load on the floor cells (after tare), kN.</param>
/// <param name="KnownMassKg">Contents by an independent record (deliveries, a period of full weighing), kg.</param>
/// <param name="KnownLevelM">Level measured at that moment (a dip, a radar), m, if any: it makes the unit weight identifiable.</param>
public sealed record CalibrationPoint(long TimestampMs, double FloorLoadKn, double KnownMassKg, double? KnownLevelM = null);

/// <summary>Result of a calibration fit: values with 95 % confidence intervals and the residuals. Apply only after a person confirmed it (<see cref="Confirm"/>).</summary>
/// <param name="UnitWeightFitted">False when no point had a known level: the floor load alone sees γ/(K·μ), not γ (Janssen), so γ was held.</param>
/// <param name="ResidualsKn">Measured minus fitted floor load at each point, kN.</param>
public sealed record CalibrationFit(
    double KMu,
    double KMuLow95,
    double KMuHigh95,
    double UnitWeightKnM3,
    double UnitWeightLow95KnM3,
    double UnitWeightHigh95KnM3,
    bool UnitWeightFitted,
    double CharacteristicDepthM,
    double ResidualRmsKn,
    IReadOnlyList<double> ResidualsKn,
    int Points,
    int Iterations,
    string ExitCondition,
    string Note)
{
    /// <summary>Relative σ of K·μ (from the 95 % interval).</summary>
    public double KMuRelativeStd => (KMuHigh95 - KMuLow95) / (2 * 1.959963984540054 * KMu);

    public double UnitWeightRelativeStd => (UnitWeightHigh95KnM3 - UnitWeightLow95KnM3) / (2 * 1.959963984540054 * UnitWeightKnM3);

    /// <summary>The calibration to apply, recorded with who confirmed it and when; a ring gain confirmed before (<paramref name="current"/>) is kept.</summary>
    public InventoryCalibration Confirm(string by, long nowUnixMs, string note = "", InventoryCalibration? current = null)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(by);
        return new InventoryCalibration(
            UnitWeightFitted ? UnitWeightKnM3 : null,
            UnitWeightFitted ? Math.Max(UnitWeightRelativeStd, InventoryCalibrator.MinimumRelativeStd) : null,
            KMu,
            Math.Max(KMuRelativeStd, InventoryCalibrator.MinimumRelativeStd),
            nowUnixMs,
            by,
            string.IsNullOrEmpty(note) ? Note : note,
            current?.RingGain,
            current?.RingGainRelativeStd,
            ResidualRmsKn);
    }
}

/// <summary>
/// Fits the solid's K·μ (and its unit weight, when levels are known) to a fill of a floor-weighed
/// silo whose contents are known, by non-linear least squares (MathNet Levenberg–Marquardt) on the
/// mechanics model's floor load. The fit is returned, never applied: a person confirms it.
/// </summary>
public static class InventoryCalibrator
{
    /// <summary>Smallest relative σ a confirmed calibration states: Janssen itself is a model, and K·μ moves with filling history [D: a choice].</summary>
    public const double MinimumRelativeStd = 0.003;

    /// <param name="floorLoadStdKn">σ of one floor-load point, kN (cells and their tare).</param>
    /// <param name="massStdKg">σ of one known mass, kg (delivery records), used for the level points.</param>
    public static CalibrationFit FitFloorLoad(SiloModel model, IReadOnlyList<CalibrationPoint> points, double floorLoadStdKn, double massStdKg)
    {
        ArgumentNullException.ThrowIfNull(model);
        ArgumentNullException.ThrowIfNull(points);
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(floorLoadStdKn);
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(massStdKg);
        var usable = points.Where(p => double.IsFinite(p.FloorLoadKn) && p.KnownMassKg > 0).ToList();
        var levelPoints = usable.Where(p => p.KnownLevelM is > 0).ToList();
        var fitGamma = levelPoints.Count > 0;
        var parameters = fitGamma ? 2 : 1;
        var rows = usable.Count + levelPoints.Count;
        if (usable.Count < parameters + 2)
        {
            throw new ArgumentException($"calibration needs at least {parameters + 2} points with a known mass; got {usable.Count}", nameof(points));
        }

        var transitionMassKg = model.MassAtLevelKg(model.Geometry.HopperHeightM);
        if (usable.Max(p => p.KnownMassKg) < 1.5 * Math.Max(transitionMassKg, 1))
        {
            throw new ArgumentException("the calibration fill must rise well above the transition: in the hopper the floor carries everything and K·μ does not show", nameof(points));
        }

        var k = model.Expected.K;
        var gamma0 = model.Expected.UnitWeightKnM3;

        // Residual rows, each divided by its σ: floor loads, then masses at known levels.
        SolidProperties Props(Vector<double> p) => new(fitGamma ? p[1] : gamma0, k, p[0] / k);

        Vector<double> Predict(Vector<double> p, Vector<double> x)
        {
            var props = Props(p);
            var rho = props.BulkDensityKgM3;
            var y = Vector<double>.Build.Dense(rows);
            for (var i = 0; i < usable.Count; i++)
            {
                var level = model.Geometry.LevelAtVolume(usable[i].KnownMassKg / rho);
                y[i] = model.FloorLoadAtLevelKn(level, props) / floorLoadStdKn;
            }

            for (var j = 0; j < levelPoints.Count; j++)
            {
                y[usable.Count + j] = model.VolumeAtLevel(levelPoints[j].KnownLevelM!.Value) * rho / massStdKg;
            }

            return y;
        }

        var xs = Vector<double>.Build.Dense(rows, i => i);
        var ys = Vector<double>.Build.Dense(rows, i => i < usable.Count
            ? usable[i].FloorLoadKn / floorLoadStdKn
            : levelPoints[i - usable.Count].KnownMassKg / massStdKg);
        var start = fitGamma
            ? Vector<double>.Build.DenseOfArray([model.Expected.KMu, gamma0])
            : Vector<double>.Build.DenseOfArray([model.Expected.KMu]);
        var lower = fitGamma ? Vector<double>.Build.DenseOfArray([0.01, 1.0]) : Vector<double>.Build.DenseOfArray([0.01]);
        var upper = fitGamma ? Vector<double>.Build.DenseOfArray([2.0, 40.0]) : Vector<double>.Build.DenseOfArray([2.0]);

        var objective = ObjectiveFunction.NonlinearModel(Predict, xs, ys, accuracyOrder: 2);
        var solver = new LevenbergMarquardtMinimizer(maximumIterations: 500);
        var result = solver.FindMinimum(objective, start, lowerBound: lower, upperBound: upper);

        var p = result.MinimizingPoint;
        var fitted = Props(p);
        var predicted = Predict(p, xs);
        var residuals = new double[usable.Count];
        for (var i = 0; i < usable.Count; i++)
        {
            residuals[i] = (ys[i] - predicted[i]) * floorLoadStdKn;
        }

        // 95 % intervals from the fit's standard errors with Student's t on the residual degrees of freedom.
        var dof = Math.Max(1, rows - parameters);
        var t = StudentT.InvCDF(0, 1, dof, 0.975);
        var seKMu = result.StandardErrors[0];
        var seGamma = fitGamma ? result.StandardErrors[1] : 0;
        var gammaLow = fitGamma ? fitted.UnitWeightKnM3 - (t * seGamma) : gamma0;
        var gammaHigh = fitGamma ? fitted.UnitWeightKnM3 + (t * seGamma) : gamma0;
        var rms = Math.Sqrt(residuals.Sum(r => r * r) / residuals.Length);
        var note = fitGamma
            ? $"K·μ and unit weight fitted to {usable.Count} floor loads and {levelPoints.Count} known levels"
            : $"K·μ fitted to {usable.Count} floor loads; the unit weight was held at {gamma0:0.##} kN/m3 (the floor load alone determines γ/(K·μ), not γ)";
        return new CalibrationFit(
            p[0],
            p[0] - (t * seKMu),
            p[0] + (t * seKMu),
            fitted.UnitWeightKnM3,
            gammaLow,
            gammaHigh,
            fitGamma,
            Janssen.CharacteristicDepthM(model.HydraulicRadiusM, p[0]),
            rms,
            residuals,
            usable.Count,
            result.Iterations,
            result.ReasonForExit.ToString(),
            note);
    }
}
