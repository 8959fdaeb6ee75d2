using SiloWatch.Simulator.Physics;
using SiloWatch.Simulator.Tests.Support;

namespace SiloWatch.Simulator.Tests;

public sealed class SolarPatternTests
{
    private static readonly string[] Axial = ["SG-R1-000", "SG-R1-060", "SG-R1-120", "SG-R1-180", "SG-R1-240", "SG-R1-300"];
    private static readonly string[] Temperatures = ["T-R1-000", "T-R1-060", "T-R1-120", "T-R1-180", "T-R1-240", "T-R1-300"];
    private static readonly double[] Angles = [0, 60, 120, 180, 240, 300];

    [Fact]
    public void TheSunRunsFromEastAtSunriseThroughSouthToWestAtSunset()
    {
        Assert.Equal(90, SunPath.AzimuthDeg(6.0001, 6, 18), 0.01);
        Assert.Equal(180, SunPath.AzimuthDeg(12, 6, 18), 1e-9);
        Assert.Equal(270, SunPath.AzimuthDeg(17.9999, 6, 18), 0.01);
        Assert.True(double.IsNaN(SunPath.AzimuthDeg(23, 6, 18)));
    }

    [Fact]
    public void TheAxialRingsSolarPatternFollowsTheSunFromMorningToAfternoon()
    {
        var run = ClearDay(new DateTimeOffset(2026, 6, 21, 4, 30, 0, TimeSpan.Zero), TimeSpan.FromHours(12), fillPercent: 50, strainNoiseMicro: 0.3);

        var morning = new DateTimeOffset(2026, 6, 21, 8, 0, 0, TimeSpan.Zero);   // 09:00 local
        var afternoon = new DateTimeOffset(2026, 6, 21, 15, 0, 0, TimeSpan.Zero); // 16:00 local
        var morningPhase = Phase(run, morning);
        var afternoonPhase = Phase(run, afternoon);
        var sunMorning = SunPath.AzimuthDeg(9, 5, 21);     // 135°
        var sunAfternoon = SunPath.AzimuthDeg(16, 5, 21);  // 213.75°

        // The shell lags the sun by its time constant (10 min ≈ 2° of sun travel); allow 8°.
        Assert.True(RingFit.AngleBetween(morningPhase, sunMorning) < 8, $"morning n = 1 at {morningPhase:F1}°, sun at {sunMorning:F1}°");
        Assert.True(RingFit.AngleBetween(afternoonPhase, sunAfternoon) < 8, $"afternoon n = 1 at {afternoonPhase:F1}°, sun at {sunAfternoon:F1}°");
        Assert.True(afternoonPhase > morningPhase + 60, "the pattern turns clockwise (east → west) with the sun");

        // The gauge temperatures say the same: the sensor facing the sun is the warmest.
        var temps = run.Snapshot("S1", Temperatures, morning);
        Assert.Equal(120.0, Angles[Array.IndexOf(temps, temps.Max())]);
        var tempsPm = run.Snapshot("S1", Temperatures, afternoon);
        Assert.Equal(240.0, Angles[Array.IndexOf(tempsPm, tempsPm.Max())]);
    }

    [Fact]
    public void TheSunsBowingBendsTheWallButLeavesTheRingsMeanAlone()
    {
        // An empty silo in full sun, no wind: what the axial ring reads, less each gauge's thermal output
        // (1.5 µε/K from its 20 °C reference), is the bowing alone. Thermal stresses of an unloaded shell balance
        // themselves round the circumference [D], so the mean (the membrane force) stays near zero while the
        // first harmonic follows the sun; the six gauges alias the sixth harmonic of the lit half into the mean
        // (2/(35π) of the peak against 1/π for the half-wave's mean [D, Fourier series]), well under 1.5 µε here.
        var run = ClearDay(new DateTimeOffset(2026, 6, 21, 9, 0, 0, TimeSpan.Zero), TimeSpan.FromHours(3), fillPercent: 0, strainNoiseMicro: 0.1, windless: true);
        var at = new DateTimeOffset(2026, 6, 21, 11, 50, 0, TimeSpan.Zero); // 12:50 local, the sun near south

        var temps = run.Snapshot("S1", Temperatures, at);
        var bow = run.Snapshot("S1", Axial, at).Select((v, k) => BridgeInverse.QuarterMicro(v, 2.1) - (1.5 * (temps[k] - 20))).ToArray();
        var (mean, a1, _) = RingFit.FirstHarmonic(Angles, bow);

        Assert.True(temps.Max() - temps.Min() > 5, $"the sun warms one side: {string.Join(", ", temps)} °C");
        Assert.True(a1 > 5, $"A1 = {a1:F2} µε: the sun bends the wall");
        Assert.True(Math.Abs(mean) < 1.5, $"ring mean {mean:F2} µε: the bowing carries no load");
    }

    [Fact]
    public void AtNightTheRingHasNoSolarPattern()
    {
        var scenario = new ScenarioBuilder()
            .StartingAt(new DateTimeOffset(2026, 6, 21, 0, 0, 0, TimeSpan.Zero))
            .Lasting(TimeSpan.FromMinutes(30))
            .WithFill("S1", 50)
            .WithNoise(strainMicro: 0.3)
            .Build();
        var run = StreamCollector.RunToEnd(TestPlant.Model(scenario));
        var values = run.Snapshot("S1", Axial, scenario.Start!.Value + TimeSpan.FromMinutes(29)).Select(v => BridgeInverse.QuarterMicro(v, 2.1)).ToArray();
        var (_, a1, _) = RingFit.FirstHarmonic(Angles, values);
        Assert.True(a1 < 1.5, $"A1 = {a1:F2} µε at night");
    }

    // A clear June day: Europe/London is UTC+1, sunrise 05:00 and sunset 21:00 local, the sun warming its side by 15 K; samples every 10 s.
    private static StreamCollector ClearDay(DateTimeOffset start, TimeSpan lasting, double fillPercent, double strainNoiseMicro, bool windless = false)
    {
        var scenario = new ScenarioBuilder()
            .StartingAt(start)
            .Lasting(lasting)
            .WithFill("S1", fillPercent)
            .WithNoise(strainMicro: strainNoiseMicro)
            .WithWeather(w =>
            {
                w.SunriseHour = 5;
                w.SunsetHour = 21;
                w.SunWarmingK = 15;
                w.Cloudiness = 0;
                if (windless)
                {
                    w.WindMeanMs = 0;
                    w.GustsPerHour = 0;
                }
            })
            .Build();
        scenario.SamplePeriod = TimeSpan.FromSeconds(10);
        scenario.TruthInterval = TimeSpan.FromMinutes(10);
        return StreamCollector.RunToEnd(TestPlant.Model(scenario));
    }

    private static double Phase(StreamCollector run, DateTimeOffset at)
    {
        var values = run.Snapshot("S1", Axial, at).Select(v => BridgeInverse.QuarterMicro(v, 2.1)).ToArray();
        return RingFit.FirstHarmonic(Angles, values).PhaseDeg;
    }
}
