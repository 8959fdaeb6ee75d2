using SiloWatch.Simulator.Scenarios;
using SiloWatch.Simulator.Tests.Support;

namespace SiloWatch.Simulator.Tests;

public sealed class OutletSignalTests
{
    [Fact]
    public void TheFeederSignalOfTheCementSiloIsOneExactlyWhileItsDischargeRuns()
    {
        var scenario = new ScenarioBuilder()
            .Lasting(TimeSpan.FromMinutes(6))
            .WithFill("C1", 80)
            .With(new ScenarioEvent { At = TimeSpan.FromMinutes(2), Type = ScenarioEventType.Discharge, Silo = "C1", MassKg = 9000, RateKgPerS = 60 })
            .Build();
        var run = StreamCollector.RunToEnd(TestPlant.Model(scenario));
        var start = scenario.Start!.Value;
        var feeder = run.Series("C1", "FD1");
        var truth = run.Ticks.SelectMany(t => t.Truth).Where(r => r.Silo == "C1").ToList();

        // One sample a second (its expected period), each 0 or 1, in the contract's unit.
        Assert.InRange(feeder.Count, 355, 362);
        Assert.All(run.Messages("C1").SelectMany(m => m.Samples).Where(s => s.Sensor == "FD1"), s => Assert.Equal("state", s.Unit));
        Assert.All(feeder, f => Assert.True(f.Value is 0 or 1, $"FD1 = {f.Value}"));

        // Running from the discharge event until 9 t have left at 60 kg/s (150 s, give or take the rate jitter).
        var running = feeder.Where(f => f.Value == 1).Select(f => f.Time).ToList();
        Assert.Equal(start + TimeSpan.FromMinutes(2), running[0]);
        Assert.InRange((running[^1] - running[0]).TotalSeconds, 120, 180);
        var discharging = truth.Where(r => r.Flow == Model.FlowState.Discharging).Select(r => r.Time).ToList();
        Assert.Equal(discharging[0], running[0]);
        Assert.All(feeder.Where(f => f.Time < running[0] || f.Time > running[^1]), f => Assert.Equal(0, f.Value));
    }
}
