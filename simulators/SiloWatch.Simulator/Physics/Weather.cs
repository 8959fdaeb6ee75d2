using SiloWatch.Simulator.Scenarios;

namespace SiloWatch.Simulator.Physics;

/// <summary>A simple sun and air model; angles clockwise from the reference mark, taken as north.</summary>
public static class SunPath
{
    /// <summary>Sun azimuth: 90° (east) at sunrise to 270° (west) at sunset, linear in local time (simple model); NaN at night.</summary>
    public static double AzimuthDeg(double localHour, double sunriseHour, double sunsetHour)
    {
        if (localHour <= sunriseHour || localHour >= sunsetHour)
        {
            return double.NaN;
        }

        return 90 + (180 * (localHour - sunriseHour) / (sunsetHour - sunriseHour));
    }

    /// <summary>Relative intensity 0..1: sin of the fraction of the day lit (simple model).</summary>
    public static double Intensity(double localHour, double sunriseHour, double sunsetHour)
    {
        if (localHour <= sunriseHour || localHour >= sunsetHour)
        {
            return 0;
        }

        return Math.Sin(Math.PI * (localHour - sunriseHour) / (sunsetHour - sunriseHour));
    }

    /// <summary>Air temperature: mean + swing·cos of the hour from a 15:00 peak (simple model).</summary>
    public static double AirTemperatureC(double localHour, WeatherSettings w) =>
        w.AirMeanC + (w.AirSwingC * Math.Cos(2 * Math.PI * (localHour - 15) / 24));

    /// <summary>Sun's warming of the shell at azimuth θ: ΔT·I·max(0, cos(θ − θ_sun)) (only the lit half warms) [simple model].</summary>
    public static double ShellWarmingK(double angleDeg, double sunAzimuthDeg, double intensity, WeatherSettings w)
    {
        if (double.IsNaN(sunAzimuthDeg) || intensity <= 0)
        {
            return 0;
        }

        var c = Math.Cos((angleDeg - sunAzimuthDeg) * Math.PI / 180);
        return c > 0 ? w.SunWarmingK * (1 - w.Cloudiness) * intensity * c : 0;
    }
}

/// <summary>Wind loads (simple engineering forms; values invented for the demo unless marked).</summary>
public static class WindLoad
{
    /// <summary>Air density, kg/m³ [V: ISA sea level 1.225].</summary>
    public const double AirDensityKgM3 = 1.225;

    /// <summary>Drag coefficient of a circular cylinder at high Reynolds number [M: ≈ 0.6–0.8]; 1.2 for a square section.</summary>
    public static double DragCoefficient(bool circular) => circular ? 0.7 : 1.2;

    /// <summary>Dynamic pressure q = ½·ρ·v², kPa.</summary>
    public static double DynamicPressureKPa(double speedMs) => 0.5 * AirDensityKgM3 * speedMs * speedMs / 1000;
}
