using SiloWatch.Plant;

namespace SiloWatch.Monitoring.Tests;

public sealed class BridgeEquationsTests
{
    // Reference: the usual strain-gauge bridge tables (quarter bridge V_o/V_ex = GF·ε/4 · 1/(1 + GF·ε/2);
    // half GF·ε/2; full GF·ε; Poisson full GF·ε(1+ν)/2) [M: from memory of the common strain-gauge
    // application notes; the same forms are derived in DOMAIN.md §3 [D]].

    [Fact]
    public void AQuarterBridgeAt1000MicrostrainReadsJustUnderHalfAMillivoltPerVoltWithItsNonLinearity()
    {
        // GF 2, ε = 1000 µε: linear approximation 0.5 mV/V; exact 0.002/4.004 = 0.49950 mV/V,
        // a non-linearity of about 0.1 % per 1000 µε for GF 2 [M: the familiar rule of thumb].
        var mvPerV = BridgeEquations.MvPerVFromStrainMicro(BridgeType.Quarter, 1000, 2.0);

        Assert.Equal(0.002 / 4.004 * 1000, mvPerV, 12);
        Assert.Equal(0.001, (0.5 - mvPerV) / 0.5, 3);
    }

    [Theory]
    [InlineData(BridgeType.Half, 1.0)]
    [InlineData(BridgeType.Full, 2.0)]
    [InlineData(BridgeType.Poisson, 1.3)]
    public void LinearBridgesAt1000MicrostrainAndGaugeFactor2GiveTheTableOutput(BridgeType bridge, double expectedMvPerV)
    {
        Assert.Equal(expectedMvPerV, BridgeEquations.MvPerVFromStrainMicro(bridge, 1000, 2.0, poissonRatio: 0.3), 12);
    }

    [Theory]
    [InlineData(BridgeType.Quarter, -1500.0)]
    [InlineData(BridgeType.Quarter, 3000.0)]
    [InlineData(BridgeType.Half, -800.0)]
    [InlineData(BridgeType.Full, 250.0)]
    [InlineData(BridgeType.Poisson, -420.0)]
    public void StrainFromTheSignalInvertsTheBridgeEquation(BridgeType bridge, double strainMicro)
    {
        var signal = BridgeEquations.MvPerVFromStrainMicro(bridge, strainMicro, 2.1, 0.28);

        Assert.Equal(strainMicro, BridgeEquations.StrainMicroFromMvPerV(bridge, signal, 2.1, 0.28), 9);
    }

    [Fact]
    public void ThermalOutputIsRemovedAboutTheReferenceTemperature()
    {
        var gauge = new SensorOptions { Kind = SensorKind.AxialStrain, Bridge = BridgeType.Full, GaugeFactor = 2.0, ThermalOutputMicroPerK = 1.5, ReferenceTemperatureC = 20 };
        // -200 µε of load plus 1.5 µε/K × 10 K of apparent strain.
        var signal = BridgeEquations.MvPerVFromStrainMicro(BridgeType.Full, -200 + 15, 2.0);

        Assert.Equal(-200, StrainConversion.StrainMicro(signal, gauge, 0.3, 30), 9);
    }
}
