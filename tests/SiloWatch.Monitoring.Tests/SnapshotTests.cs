using System.Text.Json;
using SiloWatch.Monitoring.Tests.Support;

namespace SiloWatch.Monitoring.Tests;

public sealed class SnapshotTests
{
    [Fact]
    public void ARestartedMonitorResumesFromTheSnapshotsTareAndShares()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        var t = source.Run(monitor, time.GetUtcNow().ToUnixTimeMilliseconds(), 20, _ => 0);
        monitor.Tare("night shift", t);
        t = source.Run(monitor, t + 1000, 60, _ => 150_000);
        var before = monitor.Evaluate(t);

        // Through JSON, as the journal stores it.
        var json = JsonSerializer.Serialize(monitor.Snapshot());
        var snapshot = JsonSerializer.Deserialize<MonitorSnapshot>(json)!;
        var (restarted, _, _, _) = DemoPlant.Monitor("S1");
        var problems = restarted.Restore(snapshot);
        t = source.Run(restarted, t + 1000, 30, _ => 150_000);
        var after = restarted.Evaluate(t);

        Assert.Empty(problems);
        Assert.Equal("night shift", restarted.LastTare!.By);
        Assert.Equal(Quality.Good, after.Quality);
        Assert.Equal(before.MassKg, after.MassKg, 0.0005 * model.CapacityKg);
    }

    [Fact]
    public void ASnapshotOfAnotherSiloIsRefused()
    {
        var (s1, _, _, _) = DemoPlant.Monitor("S1");
        var (f1, _, _, _) = DemoPlant.Monitor("F1");

        Assert.Throws<ArgumentException>(() => f1.Restore(s1.Snapshot()));
    }

    [Fact]
    public void TaringWithAFailedCellIsRefusedWithItsName()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        source.Silent.Add("LC2");
        var t = source.Run(monitor, time.GetUtcNow().ToUnixTimeMilliseconds(), 10, _ => 0);

        var ex = Assert.Throws<InvalidOperationException>(() => monitor.Tare("someone", t));
        Assert.Contains("LC2", ex.Message, StringComparison.Ordinal);
    }
}
