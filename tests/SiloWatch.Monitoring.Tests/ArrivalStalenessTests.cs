using SiloWatch.Monitoring.Tests.Support;
using SiloWatch.Monitoring.Wall;

namespace SiloWatch.Monitoring.Tests;

/// <summary>
/// Staleness judged against arrival (<see cref="SiloMonitor.ArrivalsSeenUntil"/>): samples processed ten
/// seconds after they were received, with more of the silo's messages still waiting, are not stale; a
/// gateway that stopped is stale once nothing of it waits; a sensor missing from every message while the
/// others arrive is stale under the same backlog. The demo silo S1 on a fake clock, invented signals.
/// </summary>
public sealed class ArrivalStalenessTests
{
    private const long BacklogMs = 10_000;
    private const long TransitMs = 40; // gateway to service

    private static int Index(Plant.SiloRef silo, string id) => silo.TryGetSensor(id, out var s) ? s.Index : throw new ArgumentException(id);

    /// <summary>
    /// One message per second for <paramref name="seconds"/> from <paramref name="startMs"/>, each received
    /// <see cref="TransitMs"/> after its samples' time and processed <see cref="BacklogMs"/> after its receipt.
    /// Returns the receipt of the last message.
    /// </summary>
    private static long Backlogged(SiloMonitor monitor, SignalSource source, double massKg, long startMs, int seconds)
    {
        var received = startMs;
        for (var i = 0; i < seconds; i++)
        {
            var ts = startMs + (i * 1000L);
            received = ts + TransitMs;
            monitor.OnArrival(received);
            foreach (var sample in source.Scan(massKg, ts))
            {
                monitor.OnSample(sample);
            }
        }

        return received;
    }

    [Fact]
    public void SamplesProcessedTenSecondsAfterTheirReceiptWithMoreQueuedAreNotStale()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var queued = true;
        monitor.TrackArrivals(() => queued);
        var source = new SignalSource(silo, model);
        var mass = 0.6 * model.CapacityKg;
        var received = Backlogged(monitor, source, mass, time.GetUtcNow().ToUnixTimeMilliseconds(), 90);
        var now = received + BacklogMs;
        time.SetUtcNow(DateTimeOffset.FromUnixTimeMilliseconds(now));

        Assert.Equal(received, monitor.ArrivalsSeenUntil(now));
        foreach (var s in silo.Sensors)
        {
            Assert.Equal(QualityFlags.None, monitor.SensorFlags(s.Index, now) & QualityFlags.Stale);
        }

        Assert.All(monitor.Readings, r => Assert.DoesNotContain("stale", r.QualityReason, StringComparison.Ordinal));
        var e = monitor.Evaluate(now);
        Assert.NotEqual(Quality.Bad, e.Quality);
        Assert.DoesNotContain("held", e.QualityReason, StringComparison.Ordinal);
        Assert.True(Math.Abs(e.MassKg - mass) < 0.002 * model.CapacityKg, $"error {e.MassKg - mass:0} kg");
    }

    [Fact]
    public void WithTheQueueEmptyAndTheGatewaySilentTheSameSamplesAreStaleOnTheClock()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var queued = true;
        monitor.TrackArrivals(() => queued);
        var source = new SignalSource(silo, model);
        var received = Backlogged(monitor, source, 0.6 * model.CapacityKg, time.GetUtcNow().ToUnixTimeMilliseconds(), 90);
        var now = received + BacklogMs;
        time.SetUtcNow(DateTimeOffset.FromUnixTimeMilliseconds(now));

        // Everything received has been processed and nothing more came: the gateway has been silent for ten seconds.
        queued = false;

        Assert.Equal(now, monitor.ArrivalsSeenUntil(now));
        foreach (var s in silo.Sensors.Where(s => s.Options.Kind != Plant.SensorKind.Temperature))
        {
            Assert.NotEqual(QualityFlags.None, monitor.SensorFlags(s.Index, now) & QualityFlags.Stale);
        }

        var e = monitor.Evaluate(now);
        Assert.Equal(Quality.Bad, e.Quality);
        Assert.Contains("held from the last measurement", e.QualityReason, StringComparison.Ordinal);
        Assert.Contains(monitor.Readings, r => r.SensorId == "LC1" && r.QualityReason.Contains("stale", StringComparison.Ordinal));
    }

    [Fact]
    public void ASensorMissingFromEveryMessageWhileTheOthersArriveIsStaleUnderTheSameBacklog()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        monitor.TrackArrivals(() => true);
        var source = new SignalSource(silo, model);
        var mass = 0.6 * model.CapacityKg;
        var start = time.GetUtcNow().ToUnixTimeMilliseconds();
        var received = Backlogged(monitor, source, mass, start, 60);

        // SG-R1-120 stops; the others keep arriving, and the service stays ten seconds behind.
        source.Silent.Add("SG-R1-120");
        received = Backlogged(monitor, source, mass, received - TransitMs + 1000, 30);
        var now = received + BacklogMs;

        var gauge = Index(silo, "SG-R1-120");
        Assert.NotEqual(QualityFlags.None, monitor.SensorFlags(gauge, now) & QualityFlags.Stale);
        foreach (var s in silo.Sensors.Where(s => s.Index != gauge))
        {
            Assert.Equal(QualityFlags.None, monitor.SensorFlags(s.Index, now) & QualityFlags.Stale);
        }
    }

    [Fact]
    public void WithoutArrivalsTrackedStalenessIsJudgedAtTheEvaluationTime()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        var received = Backlogged(monitor, source, 0.6 * model.CapacityKg, time.GetUtcNow().ToUnixTimeMilliseconds(), 30);
        var now = received + BacklogMs;

        // Nothing tells the monitor that messages wait: ten seconds without a sample is ten seconds.
        Assert.Equal(now, monitor.ArrivalsSeenUntil(now));
        Assert.NotEqual(QualityFlags.None, monitor.SensorFlags(Index(silo, "LC1"), now) & QualityFlags.Stale);
    }

    [Fact]
    public void TheWallWatchUsesTheRingGaugesOfABackloggedSiloAndRaisesNoSensorBadCondition()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        monitor.TrackArrivals(() => true);
        var source = new SignalSource(silo, model);
        var received = Backlogged(monitor, source, 0.6 * model.CapacityKg, time.GetUtcNow().ToUnixTimeMilliseconds(), 60);
        var now = received + BacklogMs;
        time.SetUtcNow(DateTimeOffset.FromUnixTimeMilliseconds(now));
        var estimate = monitor.Evaluate(now);

        var judgedAtArrival = new WallWatch(silo, model, new WallWatchOptions());
        judgedAtArrival.Update(monitor.Readings);
        var a = judgedAtArrival.Evaluate(now, estimate, monitor.ArrivalsSeenUntil(now));

        Assert.NotEmpty(a.Rings);
        Assert.All(a.Rings, r => Assert.Equal(r.Gauges, r.GoodGauges));
        Assert.All(a.Conditions.Where(c => c.Condition.Contains("/sensor-bad/", StringComparison.Ordinal)), c => Assert.Equal(0.0, c.Value));

        // Judged at the evaluation time instead, every gauge value is ten seconds old and none is used.
        var judgedAtNow = new WallWatch(silo, model, new WallWatchOptions());
        judgedAtNow.Update(monitor.Readings);
        Assert.All(judgedAtNow.Evaluate(now, estimate).Rings, r => Assert.Equal(0, r.GoodGauges));
    }
}
