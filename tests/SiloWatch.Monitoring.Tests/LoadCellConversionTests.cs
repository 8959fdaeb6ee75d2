using SiloWatch.Plant;

namespace SiloWatch.Monitoring.Tests;

public sealed class LoadCellConversionTests
{
    private static SensorOptions Cell() => new()
    {
        Kind = SensorKind.LoadCell,
        RatedOutputMvPerV = 2.0,
        CapacityKn = 2000,
        ExcitationV = 10,
        ZeroOffsetMvPerV = 0.01,
        SpanFactor = 1.0,
        ZeroTempCoeffPctRoPerK = 0.0015,
        SpanTempCoeffPctPerK = 0.001,
        ReferenceTemperatureC = 20,
    };

    [Fact]
    public void HalfTheRatedOutputAboveZeroIsHalfTheCapacity()
    {
        // Definition of rated output: output at rated capacity, mV/V [common practice, no source].
        Assert.Equal(1000, LoadCellConversion.ForceKn(1.01, Cell(), 20), 9);
    }

    [Fact]
    public void TheZeroTemperatureCoefficientShiftsTheZeroByItsShareOfRatedOutput()
    {
        // 0.0015 % RO/K × 2 mV/V × 10 K = 0.0003 mV/V, which is 0.3 kN on a 2000 kN cell.
        var cell = Cell();
        var atZeroLoad = cell.ZeroOffsetMvPerV + 0.0003;

        Assert.Equal(0, LoadCellConversion.ForceKn(atZeroLoad, cell, 30), 9);
        Assert.Equal(0.3, LoadCellConversion.ForceKn(atZeroLoad, cell, 20), 9);
    }

    [Fact]
    public void TheSpanTemperatureCoefficientScalesTheReading()
    {
        // +0.001 %/K over 20 K: the cell reads 0.02 % high; compensation takes it out.
        var cell = Cell();
        var signal = cell.ZeroOffsetMvPerV + (1.0 * (1 + 0.0002));

        Assert.Equal(1000, LoadCellConversion.ForceKn(signal + (0.0015 / 100 * 2 * 20), cell, 40), 6);
    }

    [Theory]
    [InlineData(0.0, 20.0)]
    [InlineData(1234.5, -5.0)]
    [InlineData(1999.0, 45.0)]
    public void SignalAndForceAreInverses(double forceKn, double temperatureC)
    {
        var cell = Cell();
        cell.SpanFactor = 1.003;

        Assert.Equal(forceKn, LoadCellConversion.ForceKn(LoadCellConversion.SignalMvPerV(forceKn, cell, temperatureC), cell, temperatureC), 9);
    }

    [Fact]
    public void BridgeOutputIsTheRatiometricSignalTimesTheExcitation()
    {
        Assert.Equal(20.0, LoadCellConversion.BridgeOutputMv(2.0, 10.0), 12);
    }
}
