using SiloWatch.Plant;
using SiloWatch.Simulator.Physics;
using SiloWatch.Simulator.Tests.Support;

namespace SiloWatch.Simulator.Tests;

public sealed class BridgesTests
{
    // Hand-computed values of the bridge equations [D, DOMAIN.md §3] at ε = 1000 µε, GF = 2.0, ν = 0.3.
    [Theory]
    [InlineData(BridgeType.Quarter, 0.4995004995)] // 2e-3/(4 + 2·2e-3)·1000 = 2/4.004
    [InlineData(BridgeType.Half, 1.0)]
    [InlineData(BridgeType.Full, 2.0)]
    [InlineData(BridgeType.Poisson, 1.3)]
    public void EachBridgeTypeGivesItsTextbookOutput(BridgeType bridge, double expectedMvPerV) =>
        Assert.Equal(expectedMvPerV, Bridges.StrainBridgeMvPerV(bridge, 2.0, 1000, 0.3), 1e-9);

    [Fact]
    public void TheQuarterBridgeInvertsToTheStrainItWasGiven()
    {
        foreach (var micro in new[] { -800.0, -30, 0, 45, 1200 })
        {
            Assert.Equal(micro, BridgeInverse.QuarterMicro(Bridges.StrainBridgeMvPerV(BridgeType.Quarter, 2.1, micro, 0.3), 2.1), 1e-9);
        }
    }

    [Fact]
    public void AGaugesThermalOutputIsCountedFromItsOwnReferenceTemperature()
    {
        // The monitor compensates ThermalOutput × (T − ReferenceTemperatureC) (StrainConversion): the simulator's gauge must read the same.
        Assert.Equal(0, Bridges.ThermalOutputMicro(1.5, 25, 25), 1e-12);
        Assert.Equal(1.5 * 5, Bridges.ThermalOutputMicro(1.5, 30, 25), 1e-12);
        Assert.Equal(1.5 * -5, Bridges.ThermalOutputMicro(1.5, 15, 20), 1e-12);
    }

    [Fact]
    public void ALoadCellAtCapacityAndReferenceTemperatureGivesItsRatedOutput()
    {
        var cell = new SensorOptions { RatedOutputMvPerV = 2.0, CapacityKn = 1000, ZeroOffsetMvPerV = 0.01, SpanFactor = 1, ReferenceTemperatureC = 20 };
        Assert.Equal(2.01, Bridges.LoadCellMvPerV(cell, 1000, 20, 0), 1e-12);
    }

    [Fact]
    public void TemperatureCoefficientsShiftZeroAndSpanAsADatasheetStatesThem()
    {
        // +10 K: span +0.001 %/K → ×1.0001; zero +0.0015 % RO/K → +0.0003 mV/V on a 2 mV/V cell.
        var cell = new SensorOptions { RatedOutputMvPerV = 2.0, CapacityKn = 1000, SpanFactor = 1, ReferenceTemperatureC = 20, SpanTempCoeffPctPerK = 0.001, ZeroTempCoeffPctRoPerK = 0.0015 };
        Assert.Equal((1.0 * 1.0001) + 0.0003, Bridges.LoadCellMvPerV(cell, 500, 30, 0), 1e-12);
    }

    [Fact]
    public void AThinCylinderUnderPressureStrainsByHookesLawInTwoDirections()
    {
        // p = 30 kPa, r = 3 m, t = 8 mm: σ_θ = 11 250 kPa; σ_z = −100/0.008 = −12 500 kPa; E = 200 GPa, ν = 0.3.
        var hoop = Wall.HoopStressKPa(30, 3, 0.008);
        var axial = Wall.AxialStressKPa(100, 0.008);
        var (ez, et) = Wall.Strains(axial, hoop, 200e6, 0.3);
        Assert.Equal(11250, hoop, 1e-9);
        Assert.Equal((-12500 - (0.3 * 11250)) / 200e6 * 1e6, ez, 1e-9);
        Assert.Equal((11250 + (0.3 * 12500)) / 200e6 * 1e6, et, 1e-9);
    }

    [Fact]
    public void SupportReactionsAddUpToTheLoadAndLeanTowardTheOffset()
    {
        // 4 legs at 45°, 135°, ...: W = 4000 kN offset 0.3 m toward 45° on a 3 m circle: R_1 = 1000·(1 + 2·0.1) = 1200 kN [D].
        var r = Supports.Reactions(4, 3, 45, 4000, 4000 * 0.3, 45, 0, 0);
        Assert.Equal(4000, r.Sum(), 1e-9);
        Assert.Equal(1200, r[0], 1e-9);
        Assert.Equal(800, r[2], 1e-9);
        Assert.Equal(1000, r[1], 1e-9);
    }
}
