using SiloWatch.Simulator.Scenarios;
using SiloWatch.Simulator.Tests.Support;

namespace SiloWatch.Simulator.Tests;

public sealed class ScenarioFileTests
{
    public static TheoryData<string> Names() =>
        ["normal-day", "eccentric-discharge", "sunny-idle-afternoon", "load-cell-failure-during-filling", "broker-outage", "demo"];

    [Theory]
    [MemberData(nameof(Names))]
    public void EveryScenarioFileLoadsRunsAndSaysItIsInvented(string name)
    {
        var path = TestPlant.ScenarioPath(name);
        Assert.Contains("invented", File.ReadAllText(path), StringComparison.OrdinalIgnoreCase);
        var scenario = ScenarioLoader.LoadFile(path);
        Assert.Equal(name, scenario.Name);
        Assert.NotNull(scenario.Start);
        var model = TestPlant.Model(scenario);
        for (var i = 0; i < 30; i++)
        {
            Assert.NotEmpty(model.Step().Messages);
        }
    }

    [Fact]
    public void TheDemoHasSomethingHappeningEveryFewMinutesAndBalancesSoItCanLoop()
    {
        var demo = ScenarioLoader.LoadFile(TestPlant.ScenarioPath("demo"));
        var times = demo.Events.Select(e => e.At).Order().Prepend(TimeSpan.Zero).Append(demo.Duration).ToList();
        Assert.All(times.Zip(times.Skip(1)), p => Assert.True(p.Second - p.First <= TimeSpan.FromMinutes(5), $"nothing happens between {p.First} and {p.Second}"));
        foreach (var silo in demo.Events.Where(e => e.Silo.Length > 0).Select(e => e.Silo).Distinct())
        {
            var inKg = demo.Events.Where(e => e.Silo == silo && e.Type == ScenarioEventType.Delivery).Sum(e => e.MassKg);
            var outKg = demo.Events.Where(e => e.Silo == silo && e.Type == ScenarioEventType.Discharge).Sum(e => e.MassKg);
            Assert.Equal(inKg, outKg);
        }
    }

    [Fact]
    public void ALoopingRunRepeatsTheEventsAfterEachPass()
    {
        var scenario = new ScenarioBuilder().Lasting(TimeSpan.FromMinutes(2)).WithFill("S1", 40)
            .With(new ScenarioEvent { At = TimeSpan.FromSeconds(30), Type = ScenarioEventType.Delivery, Silo = "S1", MassKg = 1000, RateKgPerS = 100 })
            .Build();
        var model = new Model.PlantModel(TestPlant.Plant, TestPlant.Materials, scenario, 1, scenario.Start!.Value, loop: true);
        var flows = new List<(TimeSpan, Model.FlowState)>();
        for (var i = 0; i < 400; i++)
        {
            var t = model.Step();
            flows.Add((t.Elapsed, model.Silos.Single(s => s.Options.Id == "S1").Flow));
        }

        Assert.Contains(flows, f => f.Item1 > TimeSpan.FromSeconds(150) && f.Item1 < TimeSpan.FromSeconds(165) && f.Item2 == Model.FlowState.Filling);
        Assert.Contains(flows, f => f.Item1 > TimeSpan.FromSeconds(270) && f.Item1 < TimeSpan.FromSeconds(285) && f.Item2 == Model.FlowState.Filling);
        Assert.False(model.Finished);
    }

    [Fact]
    public void AnEventForAnUnknownSensorIsRejectedWithItsName()
    {
        var scenario = new ScenarioBuilder()
            .With(new ScenarioEvent { Type = ScenarioEventType.Fault, Silo = "S1", Sensor = "LC9", Fault = FaultKind.Dead })
            .Build();
        var ex = Assert.Throws<InvalidDataException>(() => TestPlant.Model(scenario));
        Assert.Contains("LC9", ex.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void AnUnknownKeyInAScenarioIsAnError()
    {
        Assert.ThrowsAny<System.Text.Json.JsonException>(() => ScenarioLoader.Parse("""{ "Name": "x", "Durration": "01:00:00" }"""));
    }
}
