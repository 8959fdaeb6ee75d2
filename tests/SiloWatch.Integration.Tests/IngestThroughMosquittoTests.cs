using System.Text.Json;
using SiloWatch.Integration.Tests.Support;

namespace SiloWatch.Integration.Tests;

/// <summary>The service against a real Mosquitto: delivery, bad input, restarts, shards.</summary>
public sealed class IngestThroughMosquittoTests
{
    private const string Site = "brackenford";

    // Load cells of S1 in mV/V (2 mV/V rated): within the sensors' physical range of -0.5..3.2.
    private static (string, double, string)[] S1Cells(double mvPerV) =>
        [("LC1", mvPerV, "mV/V"), ("LC2", mvPerV, "mV/V"), ("LC3", mvPerV, "mV/V"), ("LC4", mvPerV, "mV/V"), ("T-R1-000", 8.5, "degC")];

    [Fact]
    public async Task QosOneTelemetryReachesThePipelineOfItsSilo()
    {
        await using var broker = await MosquittoServer.StartOrNullAsync();
        if (broker is null)
        {
            return;
        }

        await using var service = await ServiceUnderTest.StartAsync(broker.Port);
        await using var gateway = await TestMqtt.ConnectAsync(broker.Port, "gw-qos1");

        var start = DateTimeOffset.UtcNow.AddSeconds(-20);
        for (var i = 0; i < 20; i++)
        {
            await gateway.PublishBatchAsync(Site, "S1", start.AddSeconds(i), S1Cells(0.5));
        }

        await TestMqtt.WaitForAsync(() => service.Accepted("brackenford/S1") == 100, "100 samples accepted for S1");
        Assert.Equal(0, service.Counters.RejectedTotal);
        Assert.Equal(0, service.Accepted("brackenford/S2"));
    }

    [Fact]
    public async Task EveryKindOfBadInputIsDeadLetteredWithItsReasonWhileTheGoodSamplesAreKept()
    {
        await using var broker = await MosquittoServer.StartOrNullAsync();
        if (broker is null)
        {
            return;
        }

        await using var service = await ServiceUnderTest.StartAsync(broker.Port);
        await using var observer = await TestMqtt.ConnectAsync(broker.Port, "observer-dl", "silowatch/v1/deadletter/#");
        await using var gateway = await TestMqtt.ConnectAsync(broker.Port, "gw-bad");

        var now = DateTimeOffset.UtcNow;
        var ms = now.ToUnixTimeMilliseconds();
        // One batch: two good samples and one of each per-sample fault.
        await gateway.PublishRawAsync("silowatch/v1/telemetry/brackenford/S1", $$"""
            {"pub":"gw-bad","seq":1,"ts":{{ms}},"samples":[
              {"sensor":"LC1","value":0.41,"unit":"mV/V"},
              {"sensor":"LC9","value":0.41,"unit":"mV/V"},
              {"sensor":"LC2","value":0.41,"unit":"kN"},
              {"sensor":"LC3","value":"NaN","unit":"mV/V"},
              {"sensor":"LC4","value":7.5,"unit":"mV/V"},
              {"sensor":"LC1","ts":{{ms + 3_600_000}},"value":0.41,"unit":"mV/V"},
              {"sensor":"LC1","ts":{{ms - 3 * 3_600_000}},"value":0.41,"unit":"mV/V"},
              {"sensor":"T-R1-000","value":7.0,"unit":"degC"}
            ]}
            """);
        await gateway.PublishRawAsync("silowatch/v1/telemetry/brackenford/S1", """{"pub":"gw-bad","seq":2,"samples":[{"sensor":"LC1",""");
        await gateway.PublishRawAsync("silowatch/v1/telemetry/brackenford/NOPE", $$"""{"pub":"gw-bad","seq":1,"ts":{{ms}},"sensor":"LC1","value":0.4,"unit":"mV/V"}""");
        // The first message again: a duplicate of seq 1.
        await gateway.PublishRawAsync("silowatch/v1/telemetry/brackenford/S1", $$"""{"pub":"gw-bad","seq":1,"ts":{{ms}},"sensor":"LC1","value":0.41,"unit":"mV/V"}""");

        var expected = new[] { "unknown-sensor", "wrong-unit", "not-finite", "out-of-range", "timestamp-in-future", "timestamp-too-old", "malformed-json", "unknown-silo", "duplicate-message" };
        await TestMqtt.WaitForAsync(() => expected.All(r => Reasons(observer).Contains(r)), "a dead letter for every kind of bad input");

        Assert.Equal(2, service.Accepted("brackenford/S1"));
        foreach (var reason in expected)
        {
            Assert.True(service.Counters.Snapshot().RejectedByReason.TryGetValue(reason, out var count) && count >= 1, reason);
        }

        // Each dead letter says which silo and, where there is one, which sensor.
        var unknownSensor = observer.Received.Select(m => JsonDocument.Parse(m.Payload).RootElement)
            .First(j => j.GetProperty("reason").GetString() == "unknown-sensor");
        Assert.Equal("S1", unknownSensor.GetProperty("silo").GetString());
        Assert.Equal("LC9", unknownSensor.GetProperty("sensor").GetString());
        Assert.False(string.IsNullOrWhiteSpace(unknownSensor.GetProperty("detail").GetString()));
    }

    [Fact]
    public async Task AServiceStoppedAndRestartedWhileTheGatewayPublishesLosesNoQosOneMessage()
    {
        await using var broker = await MosquittoServer.StartOrNullAsync();
        if (broker is null)
        {
            return;
        }

        await using var gateway = await TestMqtt.ConnectAsync(broker.Port, "gw-restart");
        var first = await ServiceUnderTest.StartAsync(broker.Port, "it-restart");
        const int Messages = 300;
        var start = DateTimeOffset.UtcNow.AddMinutes(-10);
        var publishing = Task.Run(async () =>
        {
            for (var i = 0; i < Messages; i++)
            {
                await gateway.PublishBatchAsync(Site, "S1", start.AddSeconds(i), S1Cells(0.3 + (i * 0.001)));
                await Task.Delay(5);
            }
        });

        await TestMqtt.WaitForAsync(() => first.Accepted("brackenford/S1") >= 200, "the first instance processed some messages");
        await first.StopAsync();
        var acceptedByFirst = first.Accepted("brackenford/S1");
        await first.DisposeAsync();

        await publishing;
        await using var second = await ServiceUnderTest.StartAsync(broker.Port, "it-restart");
        await TestMqtt.WaitForAsync(() => acceptedByFirst + second.Accepted("brackenford/S1") >= Messages * 5,
            $"all {Messages * 5} samples processed across the restart");

        Assert.True(acceptedByFirst < Messages * 5, "the restart happened mid-stream");
        Assert.Equal(Messages * 5, acceptedByFirst + second.Accepted("brackenford/S1"));
        Assert.Equal(0, second.Counters.MissingMessages);
    }

    [Fact]
    public async Task AfterTheBrokerRestartsTheServiceReconnectsAndResubscribesByItself()
    {
        await using var broker = await MosquittoServer.StartOrNullAsync();
        if (broker is null)
        {
            return;
        }

        await using var service = await ServiceUnderTest.StartAsync(broker.Port);
        await using (var gateway = await TestMqtt.ConnectAsync(broker.Port, "gw-before"))
        {
            await gateway.PublishBatchAsync(Site, "S1", DateTimeOffset.UtcNow, S1Cells(0.5));
            await TestMqtt.WaitForAsync(() => service.Accepted("brackenford/S1") == 5, "first batch processed");
        }

        await broker.StopAsync();
        await TestMqtt.WaitForAsync(() => service.Bridge.Client?.IsConnected == false, "service saw the broker go");
        await broker.StartAsync();
        await TestMqtt.WaitForAsync(() => service.Bridge.Client?.IsConnected == true, "service reconnected", TimeSpan.FromSeconds(60));

        await using var after = await TestMqtt.ConnectAsync(broker.Port, "gw-after");
        await after.PublishBatchAsync(Site, "S1", DateTimeOffset.UtcNow, S1Cells(0.6));
        await TestMqtt.WaitForAsync(() => service.Accepted("brackenford/S1") == 10, "a batch after the broker restart processed");
        Assert.True(service.Bridge.Client!.Reconnects >= 1);
    }

    [Fact]
    public async Task TwoInstancesWithDifferentShardsEachProcessOnlyTheirOwnSilos()
    {
        await using var broker = await MosquittoServer.StartOrNullAsync();
        if (broker is null)
        {
            return;
        }

        await using var a = await ServiceUnderTest.StartAsync(broker.Port, "it-shard-a", ("Instance:ShardIndex", "0"), ("Instance:ShardCount", "2"));
        await using var b = await ServiceUnderTest.StartAsync(broker.Port, "it-shard-b", ("Instance:ShardIndex", "1"), ("Instance:ShardCount", "2"));
        await using var gateway = await TestMqtt.ConnectAsync(broker.Port, "gw-shards");

        var silos = new[] { "S1", "S2", "C1", "F1" };
        var ownedByA = a.Ingest.Pipelines.Select(p => p.Silo.SiloId).ToHashSet();
        var ownedByB = b.Ingest.Pipelines.Select(p => p.Silo.SiloId).ToHashSet();
        Assert.Empty(ownedByA.Intersect(ownedByB));
        Assert.Equal(silos.Order(), ownedByA.Union(ownedByB).Order());

        foreach (var silo in silos)
        {
            await gateway.PublishBatchAsync(Site, silo, DateTimeOffset.UtcNow, [("T-R1-000", 9.0, "degC")]);
        }

        await TestMqtt.WaitForAsync(() => a.Counters.Samples + b.Counters.Samples == 3, "three silos with T-R1-000 processed");
        // F1 has no T-R1-000 sensor: its owner rejects it, the other instance never sees it.
        await TestMqtt.WaitForAsync(() => a.Counters.RejectedTotal + b.Counters.RejectedTotal == 1, "F1's sample rejected once");
        foreach (var silo in silos.Where(s => s != "F1"))
        {
            var owner = ownedByA.Contains(silo) ? a : b;
            var other = owner == a ? b : a;
            Assert.Equal(1, owner.Accepted($"brackenford/{silo}"));
            Assert.Equal(0, other.Accepted($"brackenford/{silo}"));
        }

        Assert.Equal(4, a.Counters.Messages + b.Counters.Messages);
    }

    private static HashSet<string> Reasons(TestMqtt observer) =>
        [.. observer.Received.Select(m =>
        {
            try
            {
                return JsonDocument.Parse(m.Payload).RootElement.GetProperty("reason").GetString() ?? "";
            }
            catch (JsonException)
            {
                return "";
            }
        })];
}
