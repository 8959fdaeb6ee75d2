using SiloWatch.Plant;

namespace SiloWatch.Monitoring;

/// <summary>Strain gauge signal (mV/V) to compensated microstrain.</summary>
public static class StrainConversion
{
    /// <summary>
    /// Microstrain from the transmitted signal less the bridge's no-load output (ZeroOffsetMvPerV, the
    /// installed zero), less the gauge's apparent (thermal) strain ThermalOutputMicroPerK × (T − T_ref);
    /// T_ref is the sensor's ReferenceTemperatureC (default 20 degC).
    /// </summary>
    public static double StrainMicro(double signalMvPerV, SensorOptions gauge, double poissonRatio, double temperatureC)
    {
        var indicated = BridgeEquations.StrainMicroFromMvPerV(gauge.Bridge, signalMvPerV - gauge.ZeroOffsetMvPerV, gauge.GaugeFactor, poissonRatio);
        return indicated - ThermalOutputMicro(gauge, temperatureC);
    }

    /// <summary>Apparent strain of the installed gauge at a temperature [common practice, linearised thermal output].</summary>
    public static double ThermalOutputMicro(SensorOptions gauge, double temperatureC) =>
        gauge.ThermalOutputMicroPerK * (temperatureC - gauge.ReferenceTemperatureC);
}
