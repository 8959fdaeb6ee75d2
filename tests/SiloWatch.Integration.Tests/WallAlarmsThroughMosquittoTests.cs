using System.Globalization;
using System.Text.Json;
using System.Text.RegularExpressions;
using SiloWatch.Integration.Tests.Support;
using SiloWatch.Monitoring.Alarms;
using SiloWatch.Monitoring.Wall;
using SiloWatch.Simulator;
using Xunit.Abstractions;

namespace SiloWatch.Integration.Tests;

/// <summary>
/// The wall watch and the alarms in the running service, fed by the plant simulator (accelerated,
/// evaluated on the samples' own clock) through a real Mosquitto; operator commands over MQTT.
/// </summary>
public sealed partial class WallAlarmsThroughMosquittoTests(ITestOutputHelper output)
{
    private const string Site = "brackenford";
    private const string Operator = "op-anna";

    private static readonly (string, string)[] Replay =
    [
        ("Decoder:MaxLateness", "00:00:00"),
        ("Evaluation:Clock", "Samples"),
        ("Commands:AllowedUsers:0", Operator),
    ];

    [Fact]
    public async Task AnEccentricDischargeRaisesTheAsymmetryAlarmWithTheLoadRisingOppositeTheFlowChannel()
    {
        await using var broker = await MosquittoServer.StartOrNullAsync();
        if (broker is null)
        {
            return;
        }

        // The simulator's ground truth of the same scenario and seed as the run below (deterministic per seed).
        var truth = GroundTruth("eccentric-discharge.json", seed: 7);
        var channel = truth.First(t => t.Silo == "S1" && t.ChannelAzimuthDeg is not null).ChannelAzimuthDeg!.Value;
        var s1Peak = truth.Where(t => t.Silo == "S1").Max(t => t.WallA1Ratio);
        var setpoint = DemoLimit("S1");
        output.WriteLine($"truth: S1 flow channel at {channel:0} deg, peak A1/A0 {s1Peak:0.000}; demo plant setpoint {setpoint}");
        Assert.True(s1Peak > setpoint, $"the scenario's own truth ({s1Peak:0.000}) must exceed the demo plant's placeholder ({setpoint})");
        Assert.All(truth.Where(t => t.Silo == "S2"), t => Assert.Equal(0, t.WallA1Ratio));

        // The demo plant as it is, with its own (placeholder) limits.
        var instance = Instance("ecc");
        await using var service = await ServiceUnderTest.StartAsync(broker.Port, instance, Replay);
        await using var observer = await TestMqtt.ConnectAsync(broker.Port, "obs-" + instance, "silowatch/v1/events/#", "silowatch/v1/alarms/#");
        await using (SimulatedPlant.Start(broker.Port, "eccentric-discharge.json", speed: 100))
        {
            try
            {
                await TestMqtt.WaitForAsync(() => Transitions(observer).Any(t => IsAsymmetry(t, "S1") && t.To == "unacknowledged")
                    && Events(observer).Any(e => e.GetProperty("type").GetString() == "discharge" && e.GetProperty("silo").GetString() == "S2"),
                    "an asymmetry alarm of S1 during its side-outlet discharge, and the end of the central discharge of S2", TimeSpan.FromSeconds(55));
            }
            finally
            {
                var st = service.Ingest.Pipelines.Single(p => p.Silo.SiloId == "S1").Alarms!.Status;
                output.WriteLine($"S1 at {DateTimeOffset.FromUnixTimeMilliseconds(st.EvaluatedMs)}: {st.DischargeState} {st.Estimate?.MassKg} {st.Estimate?.RateKgPerS} {st.Estimate?.Quality} {st.Estimate?.QualityReason}");
                foreach (var r in st.Rings)
                {
                    output.WriteLine($"  {r}");
                }

                Dump(observer);
            }
        }

        var raised = Transitions(observer).First(t => IsAsymmetry(t, "S1") && t.To == "unacknowledged");
        output.WriteLine(raised.Message);

        // S2 (partly weighed, scaled by its supports) discharges centrally: its figures on the events topic are known and are those of an outflow.
        var s2 = Events(observer).First(e => e.GetProperty("type").GetString() == "discharge" && e.GetProperty("silo").GetString() == "S2");
        Assert.True(s2.GetProperty("figuresKnown").GetBoolean(), s2.ToString());
        Assert.True(s2.GetProperty("massOutKg").GetDouble() > 0, s2.ToString());
        Assert.True(s2.GetProperty("peakRateKgPerS").GetDouble() >= s2.GetProperty("meanRateKgPerS").GetDouble(), s2.ToString());

        // Inside the channel the wall load falls and beside it it rises (DOMAIN.md §2 and §4, p_hae = 2·p_hf − p_hce [M]):
        // the first harmonic of the load rise points away from the channel. Tolerance 30°: half the 60° gauge spacing
        // of S1's rings, far above the few degrees the detection benchmark measures.
        var direction = DirectionOf(raised.Message);
        Assert.True(AngleBetween(direction, channel + 180) <= 30, $"asymmetry direction {direction:0} deg, expected {channel + 180:0} ± 30 deg: {raised.Message}");
        Assert.Equal(setpoint, raised.Setpoint);
        Assert.True(raised.Value >= raised.Setpoint, $"value {raised.Value} below the setpoint {raised.Setpoint}");
        Assert.Contains("Never enter the silo", raised.Message, StringComparison.Ordinal);

        // Journaled with its time, value and who (the system), and listed retained as active.
        var history = service.Journal.QueryAlarmHistory(Site, "S1", 0, long.MaxValue);
        var row = Assert.Single(history, h => h.AlarmId == raised.Alarm && h.ToState == "unacknowledged");
        Assert.Equal("system", row.User);
        Assert.Equal(raised.Value!.Value, row.Value, 6);
        Assert.Contains(RetainedAlarms(observer, "S1"), a => a == raised.Alarm);

        // The discharge was seen as one: S1 left idle for discharging, with an event on its topic.
        Assert.Contains(observer.Received, m => m.Topic == $"silowatch/v1/events/{Site}/S1" && m.Payload.Contains("\"to\":\"discharging\"", StringComparison.Ordinal));

        // S2 discharged centrally under its own demo limit: no asymmetry alarm; its discharge record was journaled.
        Assert.DoesNotContain(Transitions(observer), t => IsAsymmetry(t, "S2") && t.To == "unacknowledged");
        var s2Event = Assert.Single(service.Journal.QueryEvents(Site, "S2", 0, long.MaxValue), e => !e.InProgress && e.MassOutKg > 10_000);
        Assert.InRange(s2Event.MassOutKg, 30_000, 50_000); // the scenario takes 40 t out of S2
        Assert.True(s2Event.MaxAsymmetryRatio < DemoLimit("S2"), $"S2 peak A1/A0 {s2Event.MaxAsymmetryRatio}");
    }

    [Fact]
    public async Task ASunnyIdleAfternoonRaisesNoAlarm()
    {
        await using var broker = await MosquittoServer.StartOrNullAsync();
        if (broker is null)
        {
            return;
        }

        var instance = Instance("sun");
        await using var service = await ServiceUnderTest.StartAsync(broker.Port, instance, Replay);
        await using var observer = await TestMqtt.ConnectAsync(broker.Port, "obs-" + instance, "silowatch/v1/events/#");
        var start = DateTimeOffset.Parse("2026-06-21T10:00:00Z", CultureInfo.InvariantCulture).ToUnixTimeMilliseconds();
        await using (SimulatedPlant.Start(broker.Port, "sunny-idle-afternoon.json", speed: 300))
        {
            // 75 simulated minutes of sun on the shells with every silo evaluated (an upper bound on the wait, not a speed
            // check: 15 s at speed 300 on a quiet machine; a busy one once needed more than 55 s).
            await TestMqtt.WaitForAsync(() => service.Ingest.Pipelines.All(p => p.Alarms!.Status.EvaluatedMs >= start + (75 * 60_000)),
                "75 simulated minutes evaluated on every silo", TimeSpan.FromSeconds(120));
        }

        Dump(observer);
        foreach (var p in service.Ingest.Pipelines)
        {
            var status = p.Alarms!.Status;
            output.WriteLine($"{p.Silo.Key}: {status.DischargeState}, {status.Estimate?.Quality} {status.Estimate?.QualityReason}, {status.Alarms.Count} active");
            Assert.Equal(DischargeState.Idle, status.DischargeState);
            Assert.Empty(status.Alarms);
        }

        Assert.DoesNotContain(Transitions(observer), t => t.To == "unacknowledged");
        Assert.DoesNotContain(service.Journal.QueryAlarmHistory(Site, null, 0, long.MaxValue), h => h.ToState == "unacknowledged");

        // Nothing flows: after the estimate's start-up (its first rate estimates can cross the threshold, see the
        // report), no silo starts a fill or a discharge all afternoon.
        var startUpEnd = DateTimeOffset.FromUnixTimeMilliseconds(start).AddSeconds(60);
        Assert.DoesNotContain(Events(observer), e => e.GetProperty("type").GetString() == "discharge-state"
            && e.GetProperty("to").GetString() is "filling" or "discharging"
            && e.GetProperty("ts").GetDateTimeOffset() > startUpEnd);
    }

    [Fact]
    public async Task ASilentPlantFloodsItsSiteOnceAcrossAllItsSilos()
    {
        await using var broker = await MosquittoServer.StartOrNullAsync();
        if (broker is null)
        {
            return;
        }

        // No telemetry at all: every sensor of every silo goes stale and raises its sensor-bad alarm (after 1 s here),
        // far more than 10 alarms in 10 minutes on the site (ISA-18.2 flood [M]), spread over four silos' workers.
        var instance = Instance("flood");
        await using var observer = await TestMqtt.ConnectAsync(broker.Port, "obs-" + instance, "silowatch/v1/events/#");
        await using var service = await ServiceUnderTest.StartAsync(broker.Port, instance, ("Alarms:Definitions:SensorBadDelay", "00:00:01"));
        var sensors = service.Ingest.Pipelines.Sum(p => p.Silo.Options.Sensors.Count);
        var raised = () => service.Journal.QueryAlarmHistory(Site, null, 0, long.MaxValue).Where(h => h.ToState == "unacknowledged").ToList();
        await TestMqtt.WaitForAsync(() => raised().Count(h => h.AlarmId.Contains("/sensor-bad-", StringComparison.Ordinal)) >= sensors,
            $"a sensor-bad alarm for each of the {sensors} sensors", TimeSpan.FromSeconds(40));
        var floodId = ConditionKeys.Flood(Site);
        await TestMqtt.WaitForAsync(() => Transitions(observer).Any(t => t.Alarm == floodId), "the flood summary on an events topic");
        await Task.Delay(TimeSpan.FromSeconds(1)); // any second summary would have arrived by now

        // Journaled once and published once for the whole site, not once per silo.
        Assert.Single(raised(), h => h.AlarmId == floodId);
        var published = Transitions(observer);
        var flood = Assert.Single(published, t => t.Alarm == floodId);
        Assert.Equal(("normal", "unacknowledged"), (flood.From, flood.To));
        Assert.Contains("Alarm flood", flood.Message, StringComparison.Ordinal);

        // The first 10 activations of the site are announced; every later one is journaled but not published.
        Assert.Equal(10, published.Count(t => t.To == "unacknowledged" && t.Alarm != floodId));
        Assert.True(raised().Count > 11, $"{raised().Count} activations journaled");
        Assert.Equal(service.Ingest.Pipelines.Count(), raised().Where(h => h.AlarmId != floodId).Select(h => h.SiloId).Distinct().Count());
    }

    [Fact]
    public async Task AnAuthorisedAcknowledgeOverMqttMovesTheStateAndIsJournaledWhileAnUnauthorisedOneIsRefused()
    {
        await using var broker = await MosquittoServer.StartOrNullAsync();
        if (broker is null)
        {
            return;
        }

        // A real overfill alarm from real data: S1 starts 85 % full, its overfill limit is lowered to 50 % for this test.
        var plant = SimulatedPlant.PlantWithLimits(("S1", "OverfillPercent", 50));
        var instance = Instance("cmd");
        (string, string)[] settings = [.. Replay, ("Instance:PlantFile", plant)];
        const string alarm = Site + "/S1/overfill";
        var service = await ServiceUnderTest.StartAsync(broker.Port, instance, settings);
        try
        {
            await using var observer = await TestMqtt.ConnectAsync(broker.Port, "obs-" + instance, "silowatch/v1/events/#");
            await using var tool = await OperatorClient.ConnectAsync(broker.Port, "tool-" + instance);
            var s1 = service.Ingest.Pipelines.Single(p => p.Silo.SiloId == "S1").Alarms!;
            await using (SimulatedPlant.Start(broker.Port, "eccentric-discharge.json", speed: 20, plantPath: plant))
            {
                await TestMqtt.WaitForAsync(() => s1.Active.Any(a => a.AlarmId == alarm && a.State == AlarmStateName.Unacknowledged), "the overfill alarm of S1");
            }

            // Someone not on the list: refused, answered, logged, nothing changes and nothing is journaled for them.
            await tool.CommandAsync(Site, "S1", "mallory", """{"id":"c1","action":"acknowledge","alarm":"overfill"}""");
            await TestMqtt.WaitForAsync(() => Answers(observer).Any(a => a.Id == "c1"), "the answer to the unauthorised command");
            var refused = Answers(observer).Single(a => a.Id == "c1");
            Assert.Equal("command-refused", refused.Type);
            Assert.Contains("not allowed", refused.Detail, StringComparison.Ordinal);
            Assert.Equal(AlarmStateName.Unacknowledged, s1.Active.Single(a => a.AlarmId == alarm).State);

            // No user property at all: refused too.
            await tool.CommandAsync(Site, "S1", "", """{"id":"c2","action":"acknowledge","alarm":"overfill"}""");
            await TestMqtt.WaitForAsync(() => Answers(observer).Any(a => a.Id == "c2"), "the answer to the anonymous command");
            Assert.Equal("command-refused", Answers(observer).Single(a => a.Id == "c2").Type);

            // The operator on the list: the state moves and the journal says who.
            await tool.CommandAsync(Site, "S1", Operator, """{"id":"c3","action":"acknowledge","alarm":"brackenford/S1/overfill","comment":"seen, filling stopped"}""");
            await TestMqtt.WaitForAsync(() => Answers(observer).Any(a => a.Id == "c3"), "the answer to the acknowledgement");
            Assert.Equal("command-accepted", Answers(observer).Single(a => a.Id == "c3").Type);
            Assert.Equal(AlarmStateName.Acknowledged, s1.Active.Single(a => a.AlarmId == alarm).State);
            Assert.Contains(Transitions(observer), t => t.Alarm == alarm && t.To == "acknowledged" && t.By == Operator);

            await tool.CommandAsync(Site, "S1", Operator, """{"id":"c4","action":"shelve","alarm":"overfill","duration":"00:30:00","reason":"level probe under test"}""");
            await TestMqtt.WaitForAsync(() => Answers(observer).Any(a => a.Id == "c4"), "the answer to the shelve");
            Assert.Equal(AlarmStateName.Shelved, s1.Active.Single(a => a.AlarmId == alarm).State);

            var history = service.Journal.QueryAlarmHistory(Site, "S1", 0, long.MaxValue).Where(h => h.AlarmId == alarm).ToList();
            Assert.Contains(history, h => h.ToState == "acknowledged" && h.User == Operator && h.Message.Contains("seen, filling stopped", StringComparison.Ordinal));
            Assert.Contains(history, h => h.ToState == "shelved" && h.User == Operator && h.Message.Contains("level probe under test", StringComparison.Ordinal));
            Assert.DoesNotContain(history, h => h.User == "mallory" || string.IsNullOrEmpty(h.User));
        }
        finally
        {
            await service.StopAsync();
            await service.DisposeAsync();
        }

        // A restart resumes the alarm states from the journal: still shelved, by the same operator.
        await using var restarted = await ServiceUnderTest.StartAsync(broker.Port, instance, settings);
        var resumed = restarted.Ingest.Pipelines.Single(p => p.Silo.SiloId == "S1").Alarms!.Active.Single(a => a.AlarmId == alarm);
        Assert.Equal(AlarmStateName.Shelved, resumed.State);
        Assert.Equal(Operator, resumed.ShelvedBy);
    }

    [Fact]
    public async Task ATareOverMqttByAnAllowedUserZeroesTheSiloAndIsJournaledWhileOthersAreRefused()
    {
        await using var broker = await MosquittoServer.StartOrNullAsync();
        if (broker is null)
        {
            return;
        }

        var instance = Instance("tare");
        await using var service = await ServiceUnderTest.StartAsync(broker.Port, instance, Replay);
        await using var observer = await TestMqtt.ConnectAsync(broker.Port, "obs-" + instance, "silowatch/v1/events/#");
        await using var tool = await OperatorClient.ConnectAsync(broker.Port, "tool-" + instance);
        var f1 = service.Ingest.Pipelines.Single(p => p.Silo.SiloId == "F1");
        await using (SimulatedPlant.Start(broker.Port, "eccentric-discharge.json", speed: 20))
        {
            await TestMqtt.WaitForAsync(() => f1.LastEstimate is { MassKg: > 50_000 }, "an estimate of F1 (half full in the scenario)");

            await tool.CommandAsync(Site, "F1", "mallory", """{"id":"t1","action":"tare"}""");
            await TestMqtt.WaitForAsync(() => Answers(observer).Any(a => a.Id == "t1"), "the answer to the unauthorised tare");
            Assert.Equal("command-refused", Answers(observer).Single(a => a.Id == "t1").Type);

            // The bin is not empty, but a tare says "take this as zero": the estimate then shows the change since.
            await tool.CommandAsync(Site, "F1", Operator, """{"id":"t2","action":"tare","comment":"test: contents taken as zero"}""");
            await TestMqtt.WaitForAsync(() => Answers(observer).Any(a => a.Id == "t2"), "the answer to the tare");
            Assert.Equal("command-accepted", Answers(observer).Single(a => a.Id == "t2").Type);
            await TestMqtt.WaitForAsync(() => f1.LastEstimate is { } e && Math.Abs(e.MassKg) < 5_000, "F1 near zero after the tare");
        }

        var tare = Assert.Single(service.Journal.QueryTares(Site, "F1", 0, long.MaxValue));
        Assert.Equal(Operator, tare.User);
        Assert.Equal("test: contents taken as zero", tare.Reason);
        Assert.True(tare.TareKg > 50_000, $"the tare removed {tare.TareKg} kg");
    }

    private void Dump(TestMqtt observer)
    {
        foreach (var m in observer.Received.Where(m => m.Topic.StartsWith("silowatch/v1/events/", StringComparison.Ordinal)))
        {
            output.WriteLine(m.Payload.Length > 400 ? m.Payload[..400] : m.Payload);
        }
    }

    /// <summary>The ground-truth rows the simulator computes for a scenario, stepped here without a broker.</summary>
    private static List<SiloWatch.Simulator.Model.TruthRow> GroundTruth(string scenario, int seed)
    {
        var options = new SimulatorRunOptions
        {
            PlantPath = Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json"),
            MaterialsPath = Path.Combine(AppContext.BaseDirectory, "config", "materials.json"),
            ScenarioPath = Path.Combine(AppContext.BaseDirectory, "scenarios", scenario),
            Speed = 100,
            Seed = seed,
        };
        return [.. SimulatorRunner.CreateModel(options, DateTimeOffset.UtcNow).Run().SelectMany(t => t.Truth)];
    }

    private static double DemoLimit(string silo)
    {
        var (plant, _) = SiloWatch.Plant.PlantLoader.LoadFile(Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json"));
        return plant.Sites.SelectMany(s => s.Silos).Single(s => s.Id == silo).AlarmLimits.AsymmetryRatioA1;
    }

    private static string Instance(string what) => $"it-{what}-{Guid.NewGuid():N}"[..16];

    private static bool IsAsymmetry(Transition t, string silo) => t.Alarm.StartsWith($"{Site}/{silo}/asymmetry-a1-", StringComparison.Ordinal);

    private sealed record Transition(string Alarm, string From, string To, double? Value, double Setpoint, string By, string Message);

    private sealed record Answer(string Type, string Id, string Detail);

    private static List<Transition> Transitions(TestMqtt observer) =>
    [
        .. Events(observer).Where(e => e.GetProperty("type").GetString() == "alarm-transition").Select(e => new Transition(
            e.GetProperty("alarm").GetString()!, e.GetProperty("from").GetString()!, e.GetProperty("to").GetString()!,
            e.GetProperty("value").ValueKind == JsonValueKind.Number ? e.GetProperty("value").GetDouble() : null,
            e.GetProperty("setpoint").GetDouble(), e.GetProperty("by").GetString()!, e.GetProperty("message").GetString()!)),
    ];

    private static List<Answer> Answers(TestMqtt observer) =>
    [
        .. Events(observer).Where(e => e.GetProperty("type").GetString() is "command-accepted" or "command-refused")
            .Select(e => new Answer(e.GetProperty("type").GetString()!, e.GetProperty("id").GetString()!, e.GetProperty("detail").GetString()!)),
    ];

    private static IEnumerable<JsonElement> Events(TestMqtt observer) =>
        observer.Received.Where(m => m.Topic.StartsWith("silowatch/v1/events/", StringComparison.Ordinal))
            .Select(m => JsonDocument.Parse(m.Payload).RootElement);

    private static List<string> RetainedAlarms(TestMqtt observer, string silo)
    {
        var last = observer.Received.LastOrDefault(m => m.Topic == $"silowatch/v1/alarms/{Site}/{silo}");
        return last.Payload is null or ""
            ? []
            : [.. JsonDocument.Parse(last.Payload).RootElement.GetProperty("alarms").EnumerateArray().Select(a => a.GetProperty("alarm").GetString()!)];
    }

    private static double DirectionOf(string message)
    {
        var m = TowardDegrees().Match(message);
        Assert.True(m.Success, $"no direction in: {message}");
        return double.Parse(m.Groups[1].Value, CultureInfo.InvariantCulture);
    }

    private static double AngleBetween(double a, double b)
    {
        var d = Math.Abs(((a - b) % 360 + 360) % 360);
        return Math.Min(d, 360 - d);
    }

    [GeneratedRegex(@"toward (\d+)°")]
    private static partial Regex TowardDegrees();
}
