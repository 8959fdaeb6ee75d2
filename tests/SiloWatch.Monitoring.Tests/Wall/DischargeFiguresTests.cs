using SiloWatch.Monitoring.Wall;

namespace SiloWatch.Monitoring.Tests.Wall;

public sealed class DischargeFiguresTests
{
    private const double Tolerance = 17_000; // 1 % of the demo cement silo's capacity

    [Fact]
    public void APlainDischargeKeepsItsFigures()
    {
        // 120 t out in 20 min: 100 kg/s mean; the busiest minute 130 kg/s.
        var f = DischargeFigures.Check(1_400_000, 1_280_000, 1200, 130, 60, Tolerance);

        Assert.True(f.Known);
        Assert.Equal(120_000, f.MassOutKg, 1e-6);
        Assert.Equal(100, f.MeanRateKgPerS, 1e-9);
        Assert.Equal(130, f.PeakRateKgPerS, 1e-9);
        Assert.Empty(f.Notes);
    }

    [Fact]
    public void AnInventoryThatRoseDuringTheDischargeGivesNoMassOutAndSaysWhy()
    {
        var f = DischargeFigures.Check(1_400_000, 1_450_000, 1200, 6047, 60, Tolerance);

        Assert.False(f.Known);
        Assert.Equal(0, f.MassOutKg);
        Assert.Equal(0, f.PeakRateKgPerS);
        Assert.Contains("rose by 50000 kg", f.Notes.Single(), StringComparison.Ordinal);
    }

    [Fact]
    public void APeakAboveWhatTheWholeDischargeLetOutIsAStepOfTheEstimateNotTheFlow()
    {
        // 6047 kg/s (21 769 t/h) over a minute is 363 t, with 30 t out in all.
        var f = DischargeFigures.Check(1_400_000, 1_370_000, 600, 6047, 60, Tolerance);

        Assert.True(f.Known);
        Assert.Equal(50, f.MeanRateKgPerS, 1e-9);
        Assert.Equal(50, f.PeakRateKgPerS, 1e-9);
        Assert.Contains("not the flow", f.Notes.Single(), StringComparison.Ordinal);
    }

    [Fact]
    public void AFlowShorterThanTheWindowTakesItsMeanAsItsPeak()
    {
        var f = DischargeFigures.Check(1_400_000, 1_397_000, 30, double.NaN, 60, Tolerance);

        Assert.Equal(100, f.PeakRateKgPerS, 1e-9);
        Assert.Contains("shorter than the peak-rate window", f.Notes.Single(), StringComparison.Ordinal);
    }

    [Fact]
    public void ASmallRiseWithinTheInventorysOwnWanderIsNoFlowOut()
    {
        var f = DischargeFigures.Check(1_400_000, 1_405_000, 600, 2, 60, Tolerance);

        Assert.True(f.Known);
        Assert.Equal(0, f.MassOutKg);
        Assert.Equal(0, f.MeanRateKgPerS);
    }
}
