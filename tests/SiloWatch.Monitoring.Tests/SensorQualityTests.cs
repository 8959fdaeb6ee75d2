using SiloWatch.Monitoring.Tests.Support;

namespace SiloWatch.Monitoring.Tests;

/// <summary>Each detector triggered by a constructed fault and left quiet by a clean signal (invented signals).</summary>
public sealed class SensorQualityTests
{
    private const double SixtyPercent = 0.6;

    private static int Index(Plant.SiloRef silo, string id) => silo.TryGetSensor(id, out var s) ? s.Index : throw new ArgumentException(id);

    private static bool AnySensorFlagged(SiloMonitor monitor, Plant.SiloRef silo, long now, QualityFlags flag) =>
        silo.Sensors.Any(s => (monitor.SensorFlags(s.Index, now) & flag) != 0);

    [Fact]
    public void ACellFrozenAtOneValueIsStuckAfterTheWindow()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        source.Frozen["LC2"] = 0.6123;
        var start = time.GetUtcNow().ToUnixTimeMilliseconds();

        var t = source.Run(monitor, start, 50, _ => SixtyPercent * model.CapacityKg);
        Assert.Equal(QualityFlags.None, monitor.SensorFlags(Index(silo, "LC2"), t) & QualityFlags.Stuck);

        t = source.Run(monitor, t + 1000, 20, _ => SixtyPercent * model.CapacityKg);
        Assert.NotEqual(QualityFlags.None, monitor.SensorFlags(Index(silo, "LC2"), t) & QualityFlags.Stuck);
        Assert.Contains("LC2", monitor.Evaluate(t).QualityReason, StringComparison.Ordinal);
    }

    [Fact]
    public void ACleanNoisySignalIsNeverStuckSpikyStaleOrDrifting()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model) { EccentricityM = 0.1, EccentricityAzimuthDeg = 30 };
        var start = time.GetUtcNow().ToUnixTimeMilliseconds();
        const QualityFlags faults = QualityFlags.Stuck | QualityFlags.Spike | QualityFlags.Stale | QualityFlags.Drift
            | QualityFlags.OutOfRange | QualityFlags.Saturated | QualityFlags.TemperatureMissing;

        for (var i = 0; i < 600; i++)
        {
            var t = source.Run(monitor, start + (i * 1000L), 1, _ => (SixtyPercent * model.CapacityKg) - (5.0 * i));
            // The first scan precedes the first temperature sample: uncompensated then, rightly.
            Assert.True(i < 1 || !AnySensorFlagged(monitor, silo, t, faults), $"a clean signal was flagged at {i} s: " + string.Join(", ", monitor.Readings.Where(r => r.QualityReason.Length > 0).Select(r => r.SensorId + " " + r.QualityReason)));
        }
    }

    [Fact]
    public void OneWildSampleIsASpikeAndDoesNotMoveTheInventory()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        var mass = SixtyPercent * model.CapacityKg;
        var t = source.Run(monitor, time.GetUtcNow().ToUnixTimeMilliseconds(), 60, _ => mass);
        var before = monitor.Evaluate(t).MassKg;

        source.OffsetMvPerV["LC1"] = 0.2; // 200 kN for one sample
        t = source.Run(monitor, t + 1000, 1, _ => mass);
        source.OffsetMvPerV.Clear();

        Assert.NotEqual(QualityFlags.None, monitor.SensorFlags(Index(silo, "LC1"), t) & QualityFlags.Spike);
        Assert.True(monitor.LastSpikeZ(Index(silo, "LC1")) > 8);
        Assert.True(Math.Abs(monitor.Evaluate(t).MassKg - before) < 0.0005 * model.CapacityKg);
    }

    [Fact]
    public void ASilentCellGoesStaleAndIsReplacedByItsExpectedShare()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        var mass = SixtyPercent * model.CapacityKg;
        var t = source.Run(monitor, time.GetUtcNow().ToUnixTimeMilliseconds(), 120, _ => mass);
        var good = monitor.Evaluate(t);

        source.Silent.Add("LC4");
        t = source.Run(monitor, t + 1000, 30, _ => mass);
        var e = monitor.Evaluate(t);

        Assert.NotEqual(QualityFlags.None, monitor.SensorFlags(Index(silo, "LC4"), t) & QualityFlags.Stale);
        Assert.Equal(Quality.Uncertain, e.Quality);
        Assert.Contains("replaced by its expected share", e.QualityReason, StringComparison.Ordinal);
        Assert.Contains("LC4: stale", e.QualityReason, StringComparison.Ordinal);
        Assert.True(e.MassHigh95Kg - e.MassLow95Kg > good.MassHigh95Kg - good.MassLow95Kg, "substitution must widen the interval");
        Assert.InRange(mass, e.MassLow95Kg, e.MassHigh95Kg);
    }

    [Fact]
    public void ACellCreepingAwayFromItsShareIsFlaggedAsDrift()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        var mass = SixtyPercent * model.CapacityKg;
        var t = source.Run(monitor, time.GetUtcNow().ToUnixTimeMilliseconds(), 120, _ => mass);
        Assert.False(AnySensorFlagged(monitor, silo, t, QualityFlags.Drift));

        // LC3 creeps by 0.001 mV/V (1 kN) a second, slowly enough to pass the spike test.
        for (var i = 1; i <= 400; i++)
        {
            source.OffsetMvPerV["LC3"] = 0.001 * i;
            t = source.Run(monitor, t + 1000, 1, _ => mass);
        }

        Assert.NotEqual(QualityFlags.None, monitor.SensorFlags(Index(silo, "LC3"), t) & QualityFlags.Drift);
        Assert.False((monitor.SensorFlags(Index(silo, "LC1"), t) & QualityFlags.Drift) != 0, "only the creeping cell");
        Assert.Contains("drift", monitor.Evaluate(t).QualityReason, StringComparison.Ordinal);
    }

    [Fact]
    public void AValueOutsideTheRangeIsRejectedAndOneAtTheRangeEndIsSaturated()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        var t = source.Run(monitor, time.GetUtcNow().ToUnixTimeMilliseconds(), 20, _ => 100_000);
        var lc1 = Index(silo, "LC1");
        var last = monitor.Readings[lc1].Value;

        monitor.OnSample(new Plant.TelemetrySample(silo.Index, lc1, t + 100, 3.5));
        Assert.NotEqual(QualityFlags.None, monitor.SensorFlags(lc1, t + 100) & QualityFlags.OutOfRange);
        Assert.Equal(last, monitor.Readings[lc1].Value);
        Assert.Equal(3.5, monitor.Readings[lc1].RawValue);

        monitor.OnSample(new Plant.TelemetrySample(silo.Index, lc1, t + 200, 3.19));
        Assert.NotEqual(QualityFlags.None, monitor.SensorFlags(lc1, t + 200) & QualityFlags.Saturated);
        Assert.Equal(Quality.Bad, QualityFlagsExtensions.Severity(monitor.SensorFlags(lc1, t + 200)));
    }

    [Fact]
    public void ACellWhosePairedThermometerIsSilentIsUncompensatedAndSaysSo()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        source.Silent.Add("T-R1-000");
        var t = source.Run(monitor, time.GetUtcNow().ToUnixTimeMilliseconds(), 30, _ => 100_000);

        var reading = monitor.Readings[Index(silo, "LC1")];

        Assert.Equal(Quality.Uncertain, reading.Quality);
        Assert.Contains("temperature missing", reading.QualityReason, StringComparison.Ordinal);
        Assert.Equal("kN", reading.Unit);
        Assert.Equal("mV/V", reading.RawUnit);
    }
}
