using SiloWatch.Plant;

namespace SiloWatch.Monitoring;

/// <summary>
/// Load cell signal (mV/V, ratiometric: the excitation cancels) to force, with zero offset, span
/// factor and the datasheet temperature coefficients of zero and span. Pure functions.
/// </summary>
public static class LoadCellConversion
{
    // Datasheet convention [common practice, no source]: zero TC in % of rated output per K,
    // span TC in % of reading per K, both about the calibration reference temperature.

    /// <summary>Force in kN from the signal in mV/V at the given cell temperature.</summary>
    public static double ForceKn(double signalMvPerV, SensorOptions cell, double temperatureC)
    {
        var deltaK = temperatureC - cell.ReferenceTemperatureC;
        var zeroMvPerV = cell.ZeroOffsetMvPerV + cell.ZeroTempCoeffPctRoPerK / 100.0 * cell.RatedOutputMvPerV * deltaK;
        var spanMvPerVPerKn = cell.RatedOutputMvPerV / cell.CapacityKn * (1.0 + cell.SpanTempCoeffPctPerK / 100.0 * deltaK);
        return (signalMvPerV - zeroMvPerV) / spanMvPerVPerKn * cell.SpanFactor;
    }

    /// <summary>The signal in mV/V a cell gives under a force: the inverse of <see cref="ForceKn"/>.</summary>
    public static double SignalMvPerV(double forceKn, SensorOptions cell, double temperatureC)
    {
        var deltaK = temperatureC - cell.ReferenceTemperatureC;
        var zeroMvPerV = cell.ZeroOffsetMvPerV + cell.ZeroTempCoeffPctRoPerK / 100.0 * cell.RatedOutputMvPerV * deltaK;
        var spanMvPerVPerKn = cell.RatedOutputMvPerV / cell.CapacityKn * (1.0 + cell.SpanTempCoeffPctPerK / 100.0 * deltaK);
        return zeroMvPerV + forceKn / cell.SpanFactor * spanMvPerVPerKn;
    }

    /// <summary>Bridge output in mV for a ratiometric signal: what the converter input actually sees.</summary>
    public static double BridgeOutputMv(double signalMvPerV, double excitationV) => signalMvPerV * excitationV;

    /// <summary>Sensitivity in kN per mV/V at the reference temperature, span factor included.</summary>
    public static double KnPerMvPerV(SensorOptions cell) => cell.CapacityKn / cell.RatedOutputMvPerV * cell.SpanFactor;
}
