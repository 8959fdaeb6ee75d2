using System.Globalization;
using SiloWatch.Messaging.Tests.Support;
using Xunit.Abstractions;

namespace SiloWatch.Messaging.Tests;

/// <summary>
/// Against a real Mosquitto (tests/run.sh starts one on 127.0.0.1:$SILOWATCH_TEST_MQTT_PORT,
/// anonymous, persistence on). Without the variable the test returns early with a note, unless
/// SILOWATCH_REQUIRE_SERVERS=1, when it fails.
/// </summary>
public sealed class MosquittoTests(ITestOutputHelper output) : IAsyncLifetime
{
    private readonly MqttTestEnvironment _env = new(output);

    public Task InitializeAsync() => Task.CompletedTask;

    public async Task DisposeAsync() => await _env.DisposeAsync();

    [Fact]
    public async Task AQos1RoundTripThroughMosquittoDeliversWhatArrivedWhileTheSubscriberWasAway()
    {
        if (MosquittoPort() is not { } port)
        {
            return;
        }

        // Unique names: Mosquitto persists sessions and retained messages between runs.
        var run = Guid.NewGuid().ToString("N")[..8];
        var topics = new TopicScheme("silowatch");
        var topic = topics.Telemetry("test-" + run, "S1");
        var subscriberId = "sub-" + run;

        var (first, firstReceived, firstLog) = _env.Client(MqttTestEnvironment.Options(port, subscriberId), subscriberId, topic);
        var (publisher, _, publisherLog) = _env.Client(MqttTestEnvironment.Options(port, "pub-" + run), "pub-" + run);
        await first.StartAsync(CancellationToken.None);
        await publisher.StartAsync(CancellationToken.None);
        await MqttTestEnvironment.ConnectedAsync(first);
        await MqttTestEnvironment.ConnectedAsync(publisher);

        await MqttTestEnvironment.PublishAsync(publisher, topic, "live");
        Assert.Equal("live", (await MqttTestEnvironment.NextAsync(firstReceived, m => m.Topic == topic)).Payload);

        await first.StopAsync(CancellationToken.None);
        for (var i = 1; i <= 5; i++)
        {
            await MqttTestEnvironment.PublishAsync(publisher, topic, "away-" + i.ToString(CultureInfo.InvariantCulture));
        }

        // Same client id, clean start off: Mosquitto resumes the session and delivers the backlog.
        var (second, secondReceived, secondLog) = _env.Client(MqttTestEnvironment.Options(port, subscriberId), subscriberId, topic);
        await second.StartAsync(CancellationToken.None);
        await MqttTestEnvironment.ConnectedAsync(second);
        // QoS 1 is at-least-once: if the first session's PUBACK of "live" had not left before its
        // DISCONNECT, the broker rightly delivers "live" again; only the backlog is checked here.
        for (var i = 1; i <= 5; i++)
        {
            Assert.Equal("away-" + i.ToString(CultureInfo.InvariantCulture),
                (await MqttTestEnvironment.NextAsync(secondReceived, m => m.Topic == topic && m.Payload != "live")).Payload);
        }

        Assert.Equal(1, secondLog.Count(Microsoft.Extensions.Logging.LogLevel.Information, "(session present: True, reconnects: 0)"));
        firstLog.AssertNoErrors();
        secondLog.AssertNoErrors();
        publisherLog.AssertNoErrors();
    }

    private int? MosquittoPort()
    {
        var text = Environment.GetEnvironmentVariable("SILOWATCH_TEST_MQTT_PORT");
        if (string.IsNullOrEmpty(text))
        {
            Assert.False(Environment.GetEnvironmentVariable("SILOWATCH_REQUIRE_SERVERS") == "1",
                "SILOWATCH_REQUIRE_SERVERS=1 but SILOWATCH_TEST_MQTT_PORT is not set: no Mosquitto to test against");
            output.WriteLine("SILOWATCH_TEST_MQTT_PORT is not set: the Mosquitto round trip did NOT run (tests/run.sh sets it).");
            return null;
        }

        Assert.True(int.TryParse(text, CultureInfo.InvariantCulture, out var port) && port is > 0 and < 65536,
            $"SILOWATCH_TEST_MQTT_PORT='{text}' is not a port");
        return port;
    }
}
