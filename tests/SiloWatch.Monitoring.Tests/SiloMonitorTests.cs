using SiloWatch.Mechanics;
using SiloWatch.Monitoring.Tests.Support;

namespace SiloWatch.Monitoring.Tests;

public sealed class SiloMonitorTests
{
    private static long Ms(DateTimeOffset t) => t.ToUnixTimeMilliseconds();

    [Fact]
    public void AllSupportsOnCellsGiveTheContentsMassWithinItsStatedInterval()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        var start = Ms(time.GetUtcNow());
        var trueMassKg = 0.6 * model.CapacityKg;
        var end = source.Run(monitor, start, 120, _ => trueMassKg);

        var e = monitor.Evaluate(end);

        Assert.Equal("all-supports", e.Method);
        Assert.InRange(trueMassKg, e.MassLow95Kg, e.MassHigh95Kg);
        Assert.True(Math.Abs(e.MassKg - trueMassKg) < 0.001 * model.CapacityKg, $"error {e.MassKg - trueMassKg:0} kg");
        // Not tared yet: the structure mass is the tare estimate, and the estimate says so.
        Assert.Equal(Quality.Uncertain, e.Quality);
        Assert.Contains("not tared", e.QualityReason, StringComparison.Ordinal);
        Assert.InRange(e.PercentFull, 55, 65);
        Assert.InRange(model.LevelAtMassKg(trueMassKg), e.LevelLow95M, e.LevelHigh95M);
    }

    [Fact]
    public void ATareWhenEmptyMakesTheEstimateGoodAndIsRecorded()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        var start = Ms(time.GetUtcNow());
        var t = source.Run(monitor, start, 30, _ => 0);
        time.SetUtcNow(DateTimeOffset.FromUnixTimeMilliseconds(t));

        var tare = monitor.Tare("j.operator", t);
        t = source.Run(monitor, t + 1000, 60, _ => 100_000);
        var e = monitor.Evaluate(t);

        Assert.Equal("j.operator", tare.By);
        Assert.Equal(4, tare.Values.Count(v => v.Unit == "kN"));
        Assert.Equal(Quality.Good, e.Quality);
        Assert.InRange(100_000, e.MassLow95Kg, e.MassHigh95Kg);
    }

    [Fact]
    public void AFillingSiloShowsItsRateAndTimeToFull()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        var start = Ms(time.GetUtcNow());
        const double rate = 20.0; // kg/s
        var end = source.Run(monitor, start, 300, i => 50_000 + (rate * i));

        var e = monitor.Evaluate(end);

        Assert.InRange(rate, e.RateLow95KgPerS, e.RateHigh95KgPerS);
        Assert.NotNull(e.TimeToFullS);
        Assert.Null(e.TimeToEmptyS);
    }

    [Fact]
    public void AnEstimateWithoutFreshWeighingDataIsStaleAndBad()
    {
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        var end = source.Run(monitor, Ms(time.GetUtcNow()), 20, _ => 80_000);

        var e = monitor.Evaluate(end + 60_000);

        Assert.Equal(Quality.Bad, e.Quality);
        Assert.Contains("stale", e.QualityReason, StringComparison.Ordinal);
    }

    [Fact]
    public void BeforeAnySampleTheEstimateIsBadAndNotANumber()
    {
        var (monitor, time, _, _) = DemoPlant.Monitor("S1");

        var e = monitor.Evaluate(Ms(time.GetUtcNow()));

        Assert.Equal(Quality.Bad, e.Quality);
        Assert.True(double.IsNaN(e.MassKg));
    }

    [Fact]
    public void TheCellsOfOneInstantAreFusedTogetherWhateverTheirOrderSoAFillDoesNotLag()
    {
        // 117 kg/s: a scan that mixed two instants would lag by a share of that per second.
        var (monitor, time, silo, model) = DemoPlant.Monitor("S1");
        var source = new SignalSource(silo, model);
        var random = new Random(4);
        var t = time.GetUtcNow().ToUnixTimeMilliseconds();
        for (var i = 0; i < 120; i++)
        {
            t += 1000;
            var samples = source.Scan(117.0 * i, t).ToArray();
            random.Shuffle(samples);
            foreach (var sample in samples)
            {
                monitor.OnSample(sample);
            }
        }

        var e = monitor.Evaluate(t);

        Assert.True(Math.Abs(e.MassKg - (117.0 * 119)) < 30, $"estimate {e.MassKg:0} kg, truth {117.0 * 119:0} kg");
    }
}
