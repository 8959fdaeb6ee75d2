using Microsoft.Extensions.Time.Testing;
using SiloWatch.Mechanics;
using SiloWatch.Monitoring.Tests.Support;
using SiloWatch.Monitoring.Wall;

namespace SiloWatch.Monitoring.Tests;

/// <summary>
/// Staleness judged against arrival (<see cref="SiloMonitor.ArrivalsSeenUntil"/>): samples processed ten
/// seconds after they were received, with more of the silo's messages still waiting, are not stale; a
/// gateway that stopped is stale once nothing of it waits; a sensor missing from every message while the
/// others arrive is stale under the same backlog; the wall watch uses the gauges and the outlet signal of a
/// backlogged silo. The demo silo S1 on a fake clock, invented signals.
/// </summary>
public sealed class ArrivalStalenessTests
{
    private const long BacklogMs = 10_000;
    private const long TransitMs = 40; // gateway to service

    private static int Index(Plant.SiloRef silo, string id) => silo.TryGetSensor(id, out var s) ? s.Index : throw new ArgumentException(id);

    [Fact]
    public void SamplesProcessedTenSecondsAfterTheirReceiptWithMoreQueuedAreNotStale()
    {
        var feed = new BackloggedFeed();
        var received = feed.Run(90);
        var now = feed.CatchUpTo(received + BacklogMs);
        var monitor = feed.Monitor;

        Assert.Equal(received, monitor.ArrivalsSeenUntil(now));
        foreach (var s in feed.Silo.Sensors)
        {
            Assert.Equal(QualityFlags.None, monitor.SensorFlags(s.Index, now) & QualityFlags.Stale);
        }

        Assert.All(monitor.Readings, r => Assert.DoesNotContain("stale", r.QualityReason, StringComparison.Ordinal));
        var e = monitor.Evaluate(now);
        Assert.NotEqual(Quality.Bad, e.Quality);
        Assert.DoesNotContain("held", e.QualityReason, StringComparison.Ordinal);
        Assert.True(Math.Abs(e.MassKg - feed.MassKg) < 0.002 * feed.Model.CapacityKg, $"error {e.MassKg - feed.MassKg:0} kg");
    }

    [Fact]
    public void WithTheQueueEmptyAndTheGatewaySilentTheSameSamplesAreStaleOnTheClock()
    {
        var feed = new BackloggedFeed();
        var now = feed.CatchUpTo(feed.Run(90) + BacklogMs);
        var monitor = feed.Monitor;

        // Everything received has been processed and nothing more came: the gateway has been silent for ten seconds.
        feed.Queued = false;

        Assert.Equal(now, monitor.ArrivalsSeenUntil(now));
        foreach (var s in feed.Silo.Sensors.Where(s => s.Options.Kind != Plant.SensorKind.Temperature))
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
        var feed = new BackloggedFeed();
        feed.Run(60);

        // SG-R1-120 stops; the others keep arriving, and the service stays ten seconds behind.
        feed.Source.Silent.Add("SG-R1-120");
        var now = feed.Run(30) + BacklogMs;

        var gauge = Index(feed.Silo, "SG-R1-120");
        Assert.NotEqual(QualityFlags.None, feed.Monitor.SensorFlags(gauge, now) & QualityFlags.Stale);
        foreach (var s in feed.Silo.Sensors.Where(s => s.Index != gauge))
        {
            Assert.Equal(QualityFlags.None, feed.Monitor.SensorFlags(s.Index, now) & QualityFlags.Stale);
        }
    }

    [Fact]
    public void WithoutArrivalsTrackedStalenessIsJudgedAtTheEvaluationTime()
    {
        var feed = new BackloggedFeed(trackArrivals: false);
        var now = feed.Run(30) + BacklogMs;

        // Nothing tells the monitor that messages wait: ten seconds without a sample is ten seconds.
        Assert.Equal(now, feed.Monitor.ArrivalsSeenUntil(now));
        Assert.NotEqual(QualityFlags.None, feed.Monitor.SensorFlags(Index(feed.Silo, "LC1"), now) & QualityFlags.Stale);
    }

    [Fact]
    public void TheWallWatchUsesTheRingGaugesOfABackloggedSiloAndRaisesNoSensorBadCondition()
    {
        var feed = new BackloggedFeed();
        var now = feed.CatchUpTo(feed.Run(60) + BacklogMs);
        var monitor = feed.Monitor;
        var estimate = monitor.Evaluate(now);

        var judgedAtArrival = new WallWatch(feed.Silo, feed.Model, new WallWatchOptions());
        judgedAtArrival.Update(monitor.Readings);
        var a = judgedAtArrival.Evaluate(now, estimate, monitor.ArrivalsSeenUntil(now));

        Assert.NotEmpty(a.Rings);
        Assert.All(a.Rings, r => Assert.Equal(r.Gauges, r.GoodGauges));
        Assert.All(a.Conditions.Where(c => c.Condition.Contains("/sensor-bad/", StringComparison.Ordinal)), c => Assert.Equal(0.0, c.Value));

        // Judged at the evaluation time instead, every gauge value is ten seconds old and none is used.
        var judgedAtNow = new WallWatch(feed.Silo, feed.Model, new WallWatchOptions());
        judgedAtNow.Update(monitor.Readings);
        Assert.All(judgedAtNow.Evaluate(now, estimate).Rings, r => Assert.Equal(0, r.GoodGauges));
    }

    [Fact]
    public void AnOpenOutletSignalBehindABacklogLongerThanItsTimeoutStillDecidesTheDischarge()
    {
        var options = new WallWatchOptions();
        var backlogMs = (long)options.OutletSignalTimeout.TotalMilliseconds + BacklogMs;
        var t0 = DemoPlant.Start.ToUnixTimeMilliseconds();
        var judgedAtArrival = new DischargeStateMachine(options);
        var judgedAtNow = new DischargeStateMachine(options);
        judgedAtArrival.Update(t0, null, t0);
        judgedAtNow.Update(t0, null);

        // The outlet opened at t0 + 1 s; its sample arrived 40 ms later and is processed 40 s after that.
        var openMs = t0 + 1000;
        judgedAtArrival.OnOutlet(openMs, open: true);
        judgedAtNow.OnOutlet(openMs, open: true);
        var nowMs = openMs + TransitMs + backlogMs;

        Assert.Equal(DischargeState.Discharging, judgedAtArrival.Update(nowMs, null, openMs + TransitMs)?.To);
        Assert.Null(judgedAtNow.Update(nowMs, null)); // 40 s old on the clock: past its timeout, and no rate to go by
    }

    /// <summary>
    /// Demo silo S1 fed one message per second at 60 % full, each received <see cref="TransitMs"/> after its
    /// samples' time and processed <see cref="BacklogMs"/> after its receipt, more of its messages waiting
    /// (<see cref="Queued"/>) unless the test says otherwise.
    /// </summary>
    private sealed class BackloggedFeed
    {
        private long _nextMs;

        public BackloggedFeed(bool trackArrivals = true)
        {
            (Monitor, Time, Silo, Model) = DemoPlant.Monitor("S1");
            Source = new SignalSource(Silo, Model);
            MassKg = 0.6 * Model.CapacityKg;
            _nextMs = Time.GetUtcNow().ToUnixTimeMilliseconds();
            if (trackArrivals)
            {
                Monitor.TrackArrivals(() => Queued);
            }
        }

        public SiloMonitor Monitor { get; }

        public FakeTimeProvider Time { get; }

        public Plant.SiloRef Silo { get; }

        public SiloModel Model { get; }

        public SignalSource Source { get; }

        public double MassKg { get; }

        public bool Queued { get; set; } = true;

        /// <summary>Passes on the next <paramref name="seconds"/> messages; returns the receipt of the last.</summary>
        public long Run(int seconds)
        {
            var received = _nextMs;
            for (var i = 0; i < seconds; i++, _nextMs += 1000)
            {
                received = _nextMs + TransitMs;
                Monitor.OnArrival(received);
                foreach (var sample in Source.Scan(MassKg, _nextMs))
                {
                    Monitor.OnSample(sample);
                }
            }

            return received;
        }

        /// <summary>Sets the clock to <paramref name="nowMs"/> and returns it.</summary>
        public long CatchUpTo(long nowMs)
        {
            Time.SetUtcNow(DateTimeOffset.FromUnixTimeMilliseconds(nowMs));
            return nowMs;
        }
    }
}
