using SiloWatch.Plant;
using System.Globalization;
using System.Text.Json;
using SiloWatch.Simulator.Scenarios;
using SiloWatch.Simulator.Tests.Support;

namespace SiloWatch.Simulator.Tests;

public sealed class MessageContractTests
{
    [Fact]
    public void EachMessageIsABatchInTheServicesContract()
    {
        var scenario = ScenarioLoader.LoadFile(TestPlant.ScenarioPath("demo"));
        scenario.Duration = TimeSpan.FromMinutes(2);
        var run = StreamCollector.RunToEnd(TestPlant.Model(scenario));
        var plant = TestPlant.Plant.Sites.Single();
        var messages = run.Ticks.SelectMany(t => t.Messages).Select(m => m.Message).ToList();
        Assert.NotEmpty(messages);
        foreach (var m in messages)
        {
            Assert.Equal($"silowatch/v1/telemetry/brackenford/{m.Silo}", m.Topic("silowatch"));
            using var doc = JsonDocument.Parse(m.ToPayload());
            var root = doc.RootElement;
            Assert.Equal("gw-brackenford-1", root.GetProperty("pub").GetString());
            Assert.Equal(m.Seq, root.GetProperty("seq").GetInt64());
            var ts = root.GetProperty("ts").GetString()!;
            Assert.Matches(@"^\d{4}-\d\d-\d\dT\d\d:\d\d:\d\d\.\d{3}Z$", ts);
            Assert.Equal(m.Timestamp, DateTimeOffset.Parse(ts, CultureInfo.InvariantCulture));
            var silo = plant.Silos.Single(s => s.Id == m.Silo);
            foreach (var sample in root.GetProperty("samples").EnumerateArray())
            {
                var sensor = silo.Sensors.Single(s => s.Id == sample.GetProperty("sensor").GetString());
                Assert.Equal(sensor.Unit, sample.GetProperty("unit").GetString());
                Assert.Equal(JsonValueKind.Number, sample.GetProperty("value").ValueKind);
            }
        }

        // Bridges every second, temperatures every 5 s (their ExpectedPeriod): the first message has everything.
        var first = messages.First(m => m.Silo == "S1");
        Assert.Equal(TestPlant.Silo("S1").Sensors.Count, first.Samples.Count);
        var second = messages.Where(m => m.Silo == "S1").Skip(1).First();
        Assert.DoesNotContain(second.Samples, s => s.Unit == "degC");
    }

    [Theory]
    [InlineData("normal-day")]
    [InlineData("demo")]
    [InlineData("sunny-idle-afternoon")]
    [InlineData("eccentric-discharge")]
    [InlineData("broker-outage")]
    [InlineData("load-cell-failure-during-filling")]
    public void WithoutFaultsEveryValueStaysInsideItsSensorsRange(string name)
    {
        var scenario = ScenarioLoader.LoadFile(TestPlant.ScenarioPath(name));
        scenario.Events.RemoveAll(e => e.Type == ScenarioEventType.Fault);
        // Coarser steps keep the test fast; the physics does not depend on the step beyond the flows' resolution.
        scenario.SamplePeriod = TimeSpan.FromSeconds(30);
        scenario.TruthInterval = TimeSpan.FromMinutes(10);
        var run = StreamCollector.RunToEnd(TestPlant.Model(scenario));
        var silos = TestPlant.Plant.Sites.Single().Silos.ToDictionary(s => s.Id);
        foreach (var m in run.Ticks.SelectMany(t => t.Messages).Select(m => m.Message))
        {
            foreach (var s in m.Samples)
            {
                var sensor = silos[m.Silo].Sensors.Single(x => x.Id == s.Sensor);
                if (sensor.Kind == SensorKind.Outlet)
                {
                    // A contact: exactly one end of its range or the other.
                    Assert.True(s.Value == sensor.RangeMin || s.Value == sensor.RangeMax, $"{m.Silo}/{s.Sensor} = {s.Value}");
                    continue;
                }

                // Strictly inside: a value at a limit would mean the transmitter saturated, i.e. the physics overshot.
                Assert.True(s.Value > sensor.RangeMin && s.Value < sensor.RangeMax, $"{m.Silo}/{s.Sensor} = {s.Value} outside {sensor.RangeMin}..{sensor.RangeMax}");
            }
        }
    }
}
