using System.Collections.Concurrent;
using System.Globalization;
using System.Text.Json;
using MQTTnet;
using SiloWatch.Simulator.Replay;
using SiloWatch.Simulator.Tests.Support;
using Xunit.Abstractions;

namespace SiloWatch.Simulator.Tests;

/// <summary>Publishes through a real Mosquitto that tests/run.sh starts on 127.0.0.1:$SILOWATCH_TEST_MQTT_PORT.</summary>
public sealed class BrokerPublishTests(ITestOutputHelper output)
{
    private static readonly TimeSpan ArrivalLimit = TimeSpan.FromSeconds(60);

    [Fact]
    public async Task AnAcceleratedRunArrivesAtTheBrokerInTheContractsShape()
    {
        if (BrokerPort() is not { } port)
        {
            return;
        }

        var prefix = "swtest-" + Guid.NewGuid().ToString("N")[..8];
        await using var sub = await Subscriber.StartAsync(port, prefix);
        var dir = Directory.CreateTempSubdirectory("silowatch-sim-");
        try
        {
            var scenarioPath = Path.Combine(dir.FullName, "short.json");
            await File.WriteAllTextAsync(scenarioPath, """
                // invented two-minute test scenario
                { "Name": "short", "Start": "2026-06-21T09:00:00Z", "Duration": "00:02:00",
                  "Silos": [ { "Silo": "S1", "InitialFillPercent": 50 }, { "Silo": "C1", "InitialFillPercent": 50 } ],
                  "Events": [ { "At": "00:00:30", "Type": "Delivery", "Silo": "S1", "MassKg": 3000, "RateKgPerS": 60 } ] }
                """);
            var options = new SimulatorRunOptions
            {
                PlantPath = TestPlant.PlantPath,
                MaterialsPath = TestPlant.MaterialsPath,
                ScenarioPath = scenarioPath,
                BrokerPort = port,
                TopicPrefix = prefix,
                Speed = 1000,
                Seed = 7,
                RecordCsvPath = Path.Combine(dir.FullName, "recorded.csv"),
                TruthCsvPath = Path.Combine(dir.FullName, "truth.csv"),
            };

            var summary = await SimulatorRunner.RunAsync(options, null, CancellationToken.None);
            Assert.Equal(121 * 4, summary.Messages);
            await sub.WaitForAsync((int)summary.Messages, ArrivalLimit);

            var bySilo = sub.Received.GroupBy(r => r.Topic).ToDictionary(g => g.Key, g => g.ToList());
            Assert.Equal(4, bySilo.Count);
            foreach (var (topic, messages) in bySilo)
            {
                Assert.Matches($"^{prefix}/v1/telemetry/brackenford/(S1|S2|C1|F1)$", topic);
                var seqs = messages.Select(m => m.Json.RootElement.GetProperty("seq").GetInt64()).Order().ToList();
                Assert.Equal(Enumerable.Range(1, 121).Select(i => (long)i), seqs);
                foreach (var m in messages)
                {
                    var root = m.Json.RootElement;
                    Assert.Equal("sim-gw-1", root.GetProperty("pub").GetString());
                    _ = DateTimeOffset.Parse(root.GetProperty("ts").GetString()!, CultureInfo.InvariantCulture);
                    Assert.All(root.GetProperty("samples").EnumerateArray(), s =>
                    {
                        Assert.False(string.IsNullOrEmpty(s.GetProperty("sensor").GetString()));
                        Assert.Contains(s.GetProperty("unit").GetString(), new[] { "mV/V", "degC", "state" });
                        Assert.Equal(JsonValueKind.Number, s.GetProperty("value").ValueKind);
                    });
                }
            }

            Assert.True(File.ReadLines(options.TruthCsvPath).Count() > 4 * 12);
            Assert.Equal(summary.Samples + 1, File.ReadLines(options.RecordCsvPath).Count());

            // The recorded file replays through the broker as the same number of messages; retimed, its
            // (June) timestamps are moved to end when the replay ends, and none is ahead of its arrival.
            await using var replaySub = await Subscriber.StartAsync(port, prefix + "r");
            var replayStart = DateTimeOffset.UtcNow;
            var replay = await ReplayRunner.RunAsync(new ReplayOptions { FilePath = options.RecordCsvPath, BrokerPort = port, TopicPrefix = prefix + "r", Speed = 1000, Retime = true }, null, CancellationToken.None);
            Assert.Equal(summary.Messages, replay.Messages);
            Assert.Equal(summary.Samples, replay.Samples);
            await replaySub.WaitForAsync((int)replay.Messages, ArrivalLimit);
            var replayed = replaySub.Received.Select(m => (Ts: DateTimeOffset.Parse(m.Json.RootElement.GetProperty("ts").GetString()!, CultureInfo.InvariantCulture), m.ReceivedAt)).ToList();
            Assert.All(replayed, r => Assert.True(r.Ts <= r.ReceivedAt, $"retimed ts {r.Ts:O} after its arrival {r.ReceivedAt:O}"));
            Assert.True(replayed.Max(r => r.Ts) >= replayStart - TimeSpan.FromSeconds(1), "retimed timestamps end about when the replay ends");
        }
        finally
        {
            dir.Delete(recursive: true);
        }
    }

    [Fact]
    public async Task AtRealTimeNoTimestampIsAheadOfTheWallClock()
    {
        if (BrokerPort() is not { } port)
        {
            return;
        }

        var prefix = "swtest-" + Guid.NewGuid().ToString("N")[..8];
        await using var sub = await Subscriber.StartAsync(port, prefix);
        var options = new SimulatorRunOptions
        {
            PlantPath = TestPlant.PlantPath,
            MaterialsPath = TestPlant.MaterialsPath,
            ScenarioPath = TestPlant.ScenarioPath("demo"),
            BrokerPort = port,
            TopicPrefix = prefix,
            Speed = 1,
            Loop = true,
        };
        using var stop = new CancellationTokenSource();
        var run = SimulatorRunner.RunAsync(options, null, stop.Token);
        await sub.WaitForAsync(8, ArrivalLimit);
        await stop.CancelAsync();
        var summary = await run;
        Assert.True(summary.Messages >= 8);
        foreach (var m in sub.Received)
        {
            var ts = DateTimeOffset.Parse(m.Json.RootElement.GetProperty("ts").GetString()!, CultureInfo.InvariantCulture);
            Assert.True(ts <= m.ReceivedAt, $"ts {ts:O} is after its arrival {m.ReceivedAt:O}");
        }
    }

    private int? BrokerPort()
    {
        var text = Environment.GetEnvironmentVariable("SILOWATCH_TEST_MQTT_PORT");
        if (int.TryParse(text, NumberStyles.None, CultureInfo.InvariantCulture, out var port))
        {
            return port;
        }

        if (Environment.GetEnvironmentVariable("SILOWATCH_REQUIRE_SERVERS") == "1")
        {
            Assert.Fail("SILOWATCH_TEST_MQTT_PORT is not set but SILOWATCH_REQUIRE_SERVERS=1: the broker test cannot run");
        }

        output.WriteLine("SILOWATCH_TEST_MQTT_PORT is not set: no broker, test skipped (tests/run.sh starts one).");
        return null;
    }

    private sealed record Received(string Topic, JsonDocument Json, DateTimeOffset ReceivedAt);

    /// <summary>An MQTTnet subscriber that collects every message under a prefix.</summary>
    private sealed class Subscriber : IAsyncDisposable
    {
        private readonly IMqttClient _client;
        private readonly ConcurrentQueue<Received> _received = new();
        private readonly SemaphoreSlim _arrived = new(0);

        private Subscriber(IMqttClient client) => _client = client;

        public IReadOnlyCollection<Received> Received => _received;

        public static async Task<Subscriber> StartAsync(int port, string prefix)
        {
            var client = new MqttClientFactory().CreateMqttClient();
            var s = new Subscriber(client);
            client.ApplicationMessageReceivedAsync += e =>
            {
                var payload = e.ApplicationMessage.Payload;
                s._received.Enqueue(new Received(e.ApplicationMessage.Topic, JsonDocument.Parse(payload), DateTimeOffset.UtcNow));
                s._arrived.Release();
                return Task.CompletedTask;
            };
            var connect = await client.ConnectAsync(new MqttClientOptionsBuilder().WithTcpServer("127.0.0.1", port).WithClientId("sub-" + prefix).Build());
            Assert.Equal(MqttClientConnectResultCode.Success, connect.ResultCode);
            await client.SubscribeAsync(new MqttClientSubscribeOptionsBuilder()
                .WithTopicFilter(f => f.WithTopic(prefix + "/v1/telemetry/#").WithQualityOfServiceLevel(MQTTnet.Protocol.MqttQualityOfServiceLevel.AtLeastOnce))
                .Build());
            return s;
        }

        /// <summary>Waits until n messages arrived; fails (not a timing assertion: a hang guard) if they do not come at all.</summary>
        public async Task WaitForAsync(int n, TimeSpan limit)
        {
            using var cts = new CancellationTokenSource(limit);
            try
            {
                while (_received.Count < n)
                {
                    await _arrived.WaitAsync(cts.Token);
                }
            }
            catch (OperationCanceledException)
            {
                Assert.Fail($"only {_received.Count} of {n} messages arrived");
            }
        }

        public async ValueTask DisposeAsync()
        {
            foreach (var r in _received)
            {
                r.Json.Dispose();
            }

            if (_client.IsConnected)
            {
                await _client.DisconnectAsync();
            }

            _client.Dispose();
            _arrived.Dispose();
        }
    }
}
