using SiloWatch.Mechanics;
using SiloWatch.Monitoring.Tests.Support;

namespace SiloWatch.Monitoring.Tests;

public sealed class InventoryCalibratorTests
{
    private static List<CalibrationPoint> Fill(SiloModel truth, double noiseKn, bool withLevels, int seed = 5)
    {
        var random = new Random(seed);
        var points = new List<CalibrationPoint>();
        for (var i = 1; i <= 40; i++)
        {
            var mass = truth.CapacityKg * 0.9 * i / 40;
            var level = truth.LevelAtMassKg(mass);
            var load = truth.FloorLoadAtLevelKn(level) + (noiseKn * (random.NextDouble() - 0.5) * Math.Sqrt(12));
            points.Add(new CalibrationPoint(i * 60_000L, load, mass, withLevels && i % 4 == 0 ? level : null));
        }

        return points;
    }

    [Fact]
    public void KMuIsRecoveredFromAFillWithKnownMassesWithinItsInterval()
    {
        // The floor loads come from the mechanics model with K·μ 15 % above the library's.
        var model = DemoPlant.Model("C1");
        var truthKMu = model.Expected.KMu * 1.15;
        var truth = model.WithExpected(model.Expected.WithKMu(truthKMu));

        var fit = InventoryCalibrator.FitFloorLoad(model, Fill(truth, 5, withLevels: false), floorLoadStdKn: 5, massStdKg: 2000);

        Assert.False(fit.UnitWeightFitted);
        Assert.InRange(truthKMu, fit.KMuLow95, fit.KMuHigh95);
        Assert.Equal(truthKMu, fit.KMu, 0.01 * truthKMu);
        Assert.InRange(fit.ResidualRmsKn, 1, 10);
        Assert.Equal(40, fit.ResidualsKn.Count);
    }

    [Fact]
    public void KnownLevelsMakeTheUnitWeightIdentifiable()
    {
        var model = DemoPlant.Model("C1");
        var truthProps = new SolidProperties(15.2, model.Expected.K, model.Expected.Mu * 0.9);
        var truth = model.WithExpected(truthProps);

        var fit = InventoryCalibrator.FitFloorLoad(model, Fill(truth, 5, withLevels: true), floorLoadStdKn: 5, massStdKg: 2000);

        Assert.True(fit.UnitWeightFitted);
        Assert.InRange(15.2, fit.UnitWeightLow95KnM3, fit.UnitWeightHigh95KnM3);
        Assert.InRange(truthProps.KMu, fit.KMuLow95, fit.KMuHigh95);
    }

    [Fact]
    public void AConfirmedFitChangesTheMonitorsModelAndIsKeptInItsSnapshot()
    {
        var (monitor, time, _, model) = DemoPlant.Monitor("C1");
        var truth = model.WithExpected(model.Expected.WithKMu(model.Expected.KMu * 0.9));
        var fit = InventoryCalibrator.FitFloorLoad(model, Fill(truth, 5, withLevels: false), 5, 2000);

        var calibration = fit.Confirm("site engineer", time.GetUtcNow().ToUnixTimeMilliseconds());
        monitor.ApplyCalibration(calibration);

        Assert.Equal(fit.KMu, monitor.Model.Expected.KMu, 9);
        Assert.Equal(calibration, monitor.Snapshot().Calibration);
        Assert.True(calibration.KMuRelativeStd >= InventoryCalibrator.MinimumRelativeStd);
    }

    [Fact]
    public void AFillThatStaysInTheHopperIsRefused()
    {
        var model = DemoPlant.Model("C1");
        var points = Enumerable.Range(1, 10)
            .Select(i => new CalibrationPoint(i, model.FloorLoadAtLevelKn(0.3 * i), model.MassAtLevelKg(0.3 * i)))
            .ToList();

        Assert.Throws<ArgumentException>(() => InventoryCalibrator.FitFloorLoad(model, points, 5, 2000));
    }
}
