using SiloWatch.Mechanics;
using SiloWatch.Monitoring.Tests.Support;

namespace SiloWatch.Monitoring.Tests;

/// <summary>The base ring's gain of the floor-weighed silo C1, fitted against known totals. Generated data, known truth.</summary>
public sealed class RingGainCalibratorTests
{
    private static List<RingGainPoint> Fill(SiloModel model, double trueGain, double noiseKn, int seed = 3)
    {
        // What the ring reads at gain 1 is the true wall load over the true gain.
        var random = new Random(seed);
        var points = new List<RingGainPoint>();
        for (var i = 1; i <= 30; i++)
        {
            var mass = model.CapacityKg * 0.9 * i / 30;
            var totalKn = Units.MassKgToWeightKn(mass);
            var floorKn = model.Expect(model.StateAtMass(mass)).FloorLoadKn;
            var belowKn = 0.02 * (totalKn - floorKn);
            var wallKn = totalKn - floorKn - belowKn;
            points.Add(new RingGainPoint(i * 60_000L, floorKn + (noiseKn * Gaussian(random)), wallKn / trueGain, belowKn, mass));
        }

        return points;
    }

    private static double Gaussian(Random r) => Math.Sqrt(-2.0 * Math.Log(1.0 - r.NextDouble())) * Math.Cos(2.0 * Math.PI * r.NextDouble());

    [Fact]
    public void TheGainIsRecoveredWithinItsIntervalAndTheResidualsAreReported()
    {
        var model = DemoPlant.Model("C1");
        var fit = RingGainCalibrator.Fit(Fill(model, trueGain: 1.05, noiseKn: 20), floorLoadStdKn: 20, massStdKg: 1000);

        Assert.InRange(1.05, fit.GainLow95, fit.GainHigh95);
        Assert.True(Math.Abs(fit.Gain - 1.05) < 0.01, $"gain {fit.Gain:0.0000}");
        Assert.True(fit.GainHigh95 - fit.GainLow95 < 0.02, "30 points at this noise pin the gain to about a percent");
        Assert.Equal(30, fit.ResidualsKn.Count);
        Assert.InRange(fit.ResidualRmsKn, 5, 60);
    }

    [Fact]
    public void TheGainAgreesWithMathNetsOrdinaryLeastSquaresLineThroughTheOrigin()
    {
        // Equal weights: the fit reduces to Σxy/Σx², which MathNet's Fit.LineThroughOrigin gives directly [MathNet.Numerics Fit].
        var model = DemoPlant.Model("C1");
        var points = Fill(model, trueGain: 0.96, noiseKn: 30);
        var fit = RingGainCalibrator.Fit(points, floorLoadStdKn: 30, massStdKg: 1e-6);
        var knPerKg = Units.StandardGravity / 1000.0;
        var reference = MathNet.Numerics.Fit.LineThroughOrigin(
            [.. points.Select(p => p.RingWallLoadKn)],
            [.. points.Select(p => (p.KnownMassKg * knPerKg) - p.FloorLoadKn - p.BelowRingKn)]);

        // The rows differ only in the small below-ring term of their σ, so the weighted and plain slopes nearly agree.
        Assert.Equal(reference, fit.Gain, 0.002);
    }

    [Fact]
    public void AConfirmedGainMovesTheFusedEstimateAndKeepsTheSolidsCalibration()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("C1");
        var source = new SignalSource(silo, model);
        var t = source.Run(monitor, time.GetUtcNow().ToUnixTimeMilliseconds(), 20, _ => 0);
        monitor.Tare("commissioning", t);
        var mass = 0.85 * model.CapacityKg;
        t = source.Run(monitor, t + 1000, 60, _ => mass);
        var before = monitor.Evaluate(t);
        var point = monitor.RingGainPointAt(mass);
        Assert.NotNull(point);

        var solid = new InventoryCalibration(null, null, model.Expected.KMu * 1.02, 0.03, t, "engineer", "K·μ from a fill");
        var confirmed = new RingGainFit(1.1, 1.09, 1.11, 0, [], 10, "test").Confirm("engineer", t, solid);
        monitor.ApplyCalibration(confirmed);
        t = source.Run(monitor, t + 1000, 60, _ => mass);
        var after = monitor.Evaluate(t);

        Assert.Equal(solid.KMu, confirmed.KMu);
        Assert.Equal(1.1, confirmed.RingGain);
        Assert.Equal(1.1, monitor.Calibration!.RingGain);
        // 10 % more wall load is read: the estimate rises (by up to a tenth of the wall share) and the gain is no longer the plain 5 % prior.
        Assert.True(after.MassKg > before.MassKg + (0.01 * mass), $"before {before.MassKg:0}, after {after.MassKg:0}");
        Assert.True(monitor.RingGainPointAt(mass)!.RingWallLoadKn < monitor.LastWallLoadKn, "the point is at gain 1");
    }

    [Fact]
    public void TooFewPointsOrARingThatCarriesAlmostNothingAreRefused()
    {
        var model = DemoPlant.Model("C1");
        var points = Fill(model, 1.0, 5);
        Assert.Throws<ArgumentException>(() => RingGainCalibrator.Fit(points.Take(2).ToList(), 5, 1000));
        var low = points.Select(p => p with { RingWallLoadKn = 0.01 * p.RingWallLoadKn }).ToList();
        Assert.Throws<ArgumentException>(() => RingGainCalibrator.Fit(low, 5, 1000));
        Assert.Throws<ArgumentOutOfRangeException>(() =>
            DemoPlant.Monitor("C1").Monitor.ApplyCalibration(new InventoryCalibration(null, null, null, null, 0, "x", "", RingGain: 3)));
    }
}
