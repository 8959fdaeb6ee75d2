using SiloWatch.Monitoring.Tests.Support;
using SiloWatch.Monitoring.Tests.Wall.Support;
using SiloWatch.Monitoring.Wall;
using SiloWatch.Plant;

namespace SiloWatch.Monitoring.Tests.Wall;

/// <summary>
/// The demo cement silo C1 sends its feeder's running signal (sensor FD1, kind Outlet, 0 or 1): it decides the
/// discharge state while it is fresh, and the rate estimate decides again when it goes stale.
/// </summary>
public sealed class OutletSignalTests
{
    private const string Silo = "C1";

    private static int Feeder(SiloRef silo) => silo.Sensors.Single(s => s.Options.Kind == SensorKind.Outlet).Index;

    [Fact]
    public void TheMonitorPassesAnOutletSignalOnAsGoodThoughItRestsAndSteps()
    {
        var (monitor, _, silo, _) = DemoPlant.Monitor(Silo);
        var fd1 = Feeder(silo);
        var t = DemoPlant.Start.ToUnixTimeMilliseconds();

        // Ten minutes stopped (at the end of its range, never changing), then a step to running.
        for (var i = 0; i < 600; i++, t += 1000)
        {
            monitor.OnSample(new TelemetrySample(silo.Index, fd1, t, 0));
        }

        monitor.OnSample(new TelemetrySample(silo.Index, fd1, t, 1));
        var reading = monitor.Readings[fd1];
        Assert.Equal(Quality.Good, reading.Quality);
        Assert.Equal(1, reading.Value);
        Assert.Equal("state", reading.Unit);
    }

    [Fact]
    public void AnOpenFeederStartsTheDischargeAtOnceWhileTheRateStillReadsZero()
    {
        var silo = DemoPlant.Silo(Silo);
        var watch = new WallWatch(silo, DemoPlant.Model(Silo), new WallWatchOptions());
        var fd1 = Feeder(silo);
        long t = 0;
        for (var i = 0; i < 30; i++, t += 1000)
        {
            watch.OnOutlet(fd1, t, 0, Quality.Good);
            Assert.Null(watch.Evaluate(t, Inventory.At(t, 500_000, 0)).StateChange);
        }

        watch.OnOutlet(fd1, t, 1, Quality.Good);
        var change = watch.Evaluate(t, Inventory.At(t, 500_000, 0)).StateChange;

        Assert.Equal((DischargeState.Idle, DischargeState.Discharging), (change?.From, change?.To));
        Assert.Equal("outlet open", change!.Reason);
        Assert.Equal(t, change.OnsetMs);
    }

    [Fact]
    public void WhileTheFeederIsStoppedAFallingMassIsNoDischarge()
    {
        var silo = DemoPlant.Silo(Silo);
        var watch = new WallWatch(silo, DemoPlant.Model(Silo), new WallWatchOptions());
        var fd1 = Feeder(silo);
        long t = 0;
        for (var i = 0; i < 120; i++, t += 1000)
        {
            watch.OnOutlet(fd1, t, 0, Quality.Good);
            watch.Evaluate(t, Inventory.At(t, 500_000 - (20.0 * i), -20));
        }

        Assert.Equal(DischargeState.Idle, watch.State);
    }

    [Fact]
    public void AStaleOrBadOutletSignalHandsTheDecisionBackToTheRate()
    {
        var options = new WallWatchOptions();
        var silo = DemoPlant.Silo(Silo);
        var watch = new WallWatch(silo, DemoPlant.Model(Silo), options);
        var fd1 = Feeder(silo);
        long t = 0;

        // Last heard "stopped"; then the signal falls silent (or turns bad) while the mass falls at 20 kg/s.
        watch.OnOutlet(fd1, t, 0, Quality.Good);
        watch.OnOutlet(fd1, t + 1000, 1, Quality.Bad);
        var changes = new List<DischargeStateChange>();
        for (var i = 0; i < 120; i++, t += 1000)
        {
            if (watch.Evaluate(t, Inventory.At(t, 500_000 - (20.0 * i), -20)).StateChange is { } c)
            {
                changes.Add(c);
            }
        }

        var started = Assert.Single(changes);
        Assert.Equal(DischargeState.Discharging, started.To);
        Assert.Equal("mass falling beyond the rate threshold", started.Reason);

        // It came from the rate only once the stopped signal had aged past the timeout (the bad sample did not count).
        Assert.True(started.TimestampMs > (long)options.OutletSignalTimeout.TotalMilliseconds, $"discharging at {started.TimestampMs} ms");
    }
}
