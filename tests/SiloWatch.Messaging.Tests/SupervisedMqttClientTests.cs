using System.Text.Json;
using Microsoft.Extensions.Logging;
using Microsoft.Extensions.Time.Testing;
using MQTTnet.Protocol;
using SiloWatch.Messaging.Tests.Support;
using Xunit.Abstractions;

namespace SiloWatch.Messaging.Tests;

/// <summary>
/// The supervised client against the in-process broker on a free loopback port. Each test fails
/// when the broker logged an error. Waits are generous upper bounds, never speed checks.
/// </summary>
public sealed class SupervisedMqttClientTests(ITestOutputHelper output) : IAsyncLifetime
{
    private readonly TopicScheme _topics = new("silowatch");
    private readonly MqttTestEnvironment _env = new(output);
    private readonly CollectingLogger _brokerLog = new("broker", output);
    private EmbeddedBroker? _broker;

    private EmbeddedBroker Broker => _broker ?? throw new InvalidOperationException("broker not started");

    public async Task InitializeAsync() => _broker = await EmbeddedBroker.StartAsync(0, _brokerLog, CancellationToken.None);

    public async Task DisposeAsync()
    {
        await _env.DisposeAsync();
        if (_broker is not null)
        {
            await _broker.DisposeAsync();
        }

        _brokerLog.AssertNoErrors();
    }

    [Fact]
    public async Task AQos1MessageIsDeliveredToTheSubscriber()
    {
        var topic = _topics.Telemetry("brackenford", "S1");
        var (subscriber, received, subscriberLog) = _env.Client(MqttTestEnvironment.Options(Broker.Port, "sub-1"), "sub-1", topic);
        var (publisher, _, _) = _env.Client(MqttTestEnvironment.Options(Broker.Port, "pub-1"), "pub-1");
        await subscriber.StartAsync(CancellationToken.None);
        await publisher.StartAsync(CancellationToken.None);
        await MqttTestEnvironment.ConnectedAsync(subscriber);
        await MqttTestEnvironment.ConnectedAsync(publisher);

        await MqttTestEnvironment.PublishAsync(publisher, topic, """{"seq":1}""");

        var message = await MqttTestEnvironment.NextAsync(received, m => m.Topic == topic);
        Assert.Equal("""{"seq":1}""", message.Payload);
        Assert.True(subscriber.IsConnected);
        Assert.Equal(0, subscriber.Reconnects);
        subscriberLog.AssertNoErrors();
    }

    [Fact]
    public async Task AfterTheBrokerRestartsOnTheSamePortTheClientReconnectsAndResubscribesByItself()
    {
        var topic = _topics.Telemetry("brackenford", "S2");
        var (subscriber, received, subscriberLog) = _env.Client(MqttTestEnvironment.Options(Broker.Port, "sub-restart"), "sub-restart", topic);
        var (publisher, _, _) = _env.Client(MqttTestEnvironment.Options(Broker.Port, "pub-restart"), "pub-restart");
        await subscriber.StartAsync(CancellationToken.None);
        await publisher.StartAsync(CancellationToken.None);
        await MqttTestEnvironment.ConnectedAsync(subscriber);
        await MqttTestEnvironment.ConnectedAsync(publisher);
        await MqttTestEnvironment.PublishAsync(publisher, topic, "before");
        await MqttTestEnvironment.NextAsync(received, m => m.Payload == "before");

        var port = Broker.Port;
        await Broker.StopAsync();
        await WaitUntil(() => !subscriber.IsConnected && !publisher.IsConnected);
        await Assert.ThrowsAsync<MqttPublishException>(() => MqttTestEnvironment.PublishAsync(publisher, topic, "while down"));

        // A new broker has no sessions: the client must notice "no session present" and subscribe again.
        _broker = await EmbeddedBroker.StartAsync(port, _brokerLog, CancellationToken.None);
        await MqttTestEnvironment.ConnectedAsync(subscriber);
        await MqttTestEnvironment.ConnectedAsync(publisher);
        await MqttTestEnvironment.PublishAsync(publisher, topic, "after");

        Assert.Equal("after", (await MqttTestEnvironment.NextAsync(received, m => m.Topic == topic)).Payload);
        Assert.Equal(1, subscriber.Reconnects);
        Assert.Equal(1, subscriberLog.Count(LogLevel.Warning, "lost"));
        Assert.Equal(2, subscriberLog.Count(LogLevel.Information, "subscribed to 1 of 1 filters (session present: False)"));
        subscriberLog.AssertNoErrors();
    }

    /// <summary>An instance's client connected and online, with an observer of its status topic (the online status already taken).</summary>
    private async Task<(SupervisedMqttClient Instance, System.Threading.Channels.Channel<ReceivedMessage> Status, CollectingLogger Log)> OnlineAndWatchedAsync(
        string clientId, string instanceId)
    {
        var (observer, received, _) = _env.Client(MqttTestEnvironment.Options(Broker.Port, "observer-" + clientId), "observer-" + clientId,
            _topics.InstanceStatus(instanceId));
        var (instance, _, log) = _env.Client(MqttTestEnvironment.Options(Broker.Port, clientId), instanceId);
        await observer.StartAsync(CancellationToken.None);
        await MqttTestEnvironment.ConnectedAsync(observer);
        await instance.StartAsync(CancellationToken.None);
        await MqttTestEnvironment.ConnectedAsync(instance);
        Assert.Equal("online", Status(await MqttTestEnvironment.NextAsync(received)));
        return (instance, received, log);
    }

    [Fact]
    public async Task AClientThatDiesWithoutDisconnectingIsMarkedOfflineByItsWill()
    {
        var (dying, received, _) = await OnlineAndWatchedAsync("dying", "shard-7");

        await dying.AbandonAsync();

        var offline = await MqttTestEnvironment.NextAsync(received);
        Assert.Equal(_topics.InstanceStatus("shard-7"), offline.Topic);
        Assert.Equal(("offline", "connection lost"), (Status(offline), Property(offline, "reason")));
        var retained = await Broker.Server.GetRetainedMessageAsync(_topics.InstanceStatus("shard-7"));
        Assert.True(retained is not null, "the will must be retained");
    }

    [Fact]
    public async Task TheOnlineStatusIsRetainedForLaterObserversAndACleanStopSaysOffline()
    {
        var (instance, _, _) = _env.Client(MqttTestEnvironment.Options(Broker.Port, "shard-3-client"), "shard-3");
        await instance.StartAsync(CancellationToken.None);
        await MqttTestEnvironment.ConnectedAsync(instance);

        // Subscribing after the fact: only a retained message can arrive.
        var (observer, received, _) = _env.Client(MqttTestEnvironment.Options(Broker.Port, "observer-retained"), "observer-retained",
            instance.StatusTopic);
        await observer.StartAsync(CancellationToken.None);
        var online = await MqttTestEnvironment.NextAsync(received);
        Assert.True(online.Retain);
        Assert.Equal(("online", "shard-3"), (Status(online), Property(online, "instance")));

        await instance.StopAsync(CancellationToken.None);

        var offline = await MqttTestEnvironment.NextAsync(received);
        Assert.Equal(("offline", "stopped"), (Status(offline), Property(offline, "reason")));
        Assert.False(instance.IsConnected);
    }

    [Fact]
    public async Task AStopOutOfTimeReturnsWithAWarningInsteadOfThrowingAndTheWillSaysOffline()
    {
        var (instance, received, log) = await OnlineAndWatchedAsync("late-stop", "shard-9");

        // The host's shutdown timeout has already run out when the client's turn comes.
        using var expired = new CancellationTokenSource();
        await expired.CancelAsync();
        await instance.StopAsync(expired.Token);

        Assert.Equal(1, log.Count(LogLevel.Warning, "stop out of time"));
        await instance.DisposeAsync();
        var offline = await MqttTestEnvironment.NextAsync(received);
        Assert.Equal(("offline", "connection lost"), (Status(offline), Property(offline, "reason")));
    }

    [Fact]
    public async Task MessagesPublishedWhileASubscriberIsStoppedArriveWhenItComesBack()
    {
        var topic = _topics.Command("brackenford", "F1");
        var (first, _, _) = _env.Client(MqttTestEnvironment.Options(Broker.Port, "persistent-1"), "persistent-1", topic);
        var (publisher, _, _) = _env.Client(MqttTestEnvironment.Options(Broker.Port, "pub-persistent"), "pub-persistent");
        await first.StartAsync(CancellationToken.None);
        await publisher.StartAsync(CancellationToken.None);
        await MqttTestEnvironment.ConnectedAsync(first);
        await MqttTestEnvironment.ConnectedAsync(publisher);
        await first.StopAsync(CancellationToken.None);

        for (var i = 1; i <= 3; i++)
        {
            await MqttTestEnvironment.PublishAsync(publisher, topic, $"missed-{i}");
        }

        var (second, received, _) = _env.Client(MqttTestEnvironment.Options(Broker.Port, "persistent-1"), "persistent-1", topic);
        await second.StartAsync(CancellationToken.None);

        for (var i = 1; i <= 3; i++)
        {
            Assert.Equal($"missed-{i}", (await MqttTestEnvironment.NextAsync(received, m => m.Topic == topic)).Payload);
        }
    }

    [Fact]
    public async Task AWrongPasswordIsLoggedClearlyOnceAndRetriedWithoutThrowing()
    {
        var securePort = 0;
        await using var secure = await EmbeddedBroker.StartAsync(0, _brokerLog, e =>
        {
            if (e.UserName != "silowatch" || e.Password != "right")
            {
                e.ReasonCode = MqttConnectReasonCode.BadUserNameOrPassword;
            }

            return Task.CompletedTask;
        }, CancellationToken.None);
        securePort = secure.Port;
        var passwordFile = Path.GetTempFileName();
        await File.WriteAllTextAsync(passwordFile, "pw-7Xq-wrong\n");
        try
        {
            var options = MqttTestEnvironment.Options(securePort, "bad-login");
            options.Username = "silowatch";
            options.PasswordFile = passwordFile;
            var (client, _, log) = _env.Client(options, "bad-login");

            await client.StartAsync(CancellationToken.None);
            await WaitUntil(() => log.Count(LogLevel.Debug, "reconnect attempt 3 failed") > 0);

            Assert.False(client.IsConnected);
            var refusal = Assert.Single(log.Errors);
            Assert.Contains("refused", refusal.Message, StringComparison.Ordinal);
            Assert.Contains("BadUserNameOrPassword", refusal.Message, StringComparison.Ordinal);
            Assert.DoesNotContain("pw-7Xq-wrong", string.Join("\n", log.Entries.Select(e => e.Message)), StringComparison.Ordinal);

            // The file is read at each attempt: fixing it lets the supervisor in without a restart.
            await File.WriteAllTextAsync(passwordFile, "right\n");
            await MqttTestEnvironment.ConnectedAsync(client);
            Assert.Equal(1, log.Count(LogLevel.Information, "works again"));
        }
        finally
        {
            File.Delete(passwordFile);
        }
    }

    [Fact]
    public async Task WhenTheBrokerDropsTheConnectionOnSubscribeTheClientStartsOverUntilSubscribed()
    {
        var topic = _topics.Command("brackenford", "S1");
        var drops = 0;
        Broker.Server.InterceptingSubscriptionAsync += e =>
        {
            if (e.ClientId == "flaky-sub" && Interlocked.Increment(ref drops) <= 2)
            {
                e.CloseConnection = true;
            }

            return Task.CompletedTask;
        };
        var (client, received, log) = _env.Client(MqttTestEnvironment.Options(Broker.Port, "flaky-sub"), "flaky-sub", topic);
        var (publisher, _, _) = _env.Client(MqttTestEnvironment.Options(Broker.Port, "flaky-pub"), "flaky-pub");
        await client.StartAsync(CancellationToken.None);
        await publisher.StartAsync(CancellationToken.None);
        await MqttTestEnvironment.ConnectedAsync(client);
        await MqttTestEnvironment.ConnectedAsync(publisher);

        await MqttTestEnvironment.PublishAsync(publisher, topic, "finally");

        Assert.Equal("finally", (await MqttTestEnvironment.NextAsync(received, m => m.Topic == topic)).Payload);
        Assert.Equal(3, drops);
        Assert.Equal(1, log.Count(LogLevel.Warning, "subscribing or publishing the status failed"));
    }

    [Fact]
    public async Task ARefusedSubscriptionIsLoggedAsAnError()
    {
        Broker.Server.InterceptingSubscriptionAsync += e =>
        {
            if (e.ClientId == "not-allowed")
            {
                e.Response.ReasonCode = MqttSubscribeReasonCode.NotAuthorized;
            }

            return Task.CompletedTask;
        };
        var topic = _topics.Command("brackenford", "C1");
        var (client, _, log) = _env.Client(MqttTestEnvironment.Options(Broker.Port, "not-allowed"), "not-allowed", topic);

        await client.StartAsync(CancellationToken.None);
        await MqttTestEnvironment.ConnectedAsync(client);

        var error = Assert.Single(log.Errors);
        Assert.Contains(topic, error.Message, StringComparison.Ordinal);
        Assert.Contains("NotAuthorized", error.Message, StringComparison.Ordinal);
        Assert.Equal(1, log.Count(LogLevel.Information, "subscribed to 0 of 1 filters"));
    }

    [Fact]
    public async Task ARefusedStatusMessageIsAWarningAndTheClientStaysConnected()
    {
        Broker.Server.InterceptingPublishAsync += e =>
        {
            if (e.ClientId == "no-status" && e.ApplicationMessage.Topic.Contains("/instance/", StringComparison.Ordinal))
            {
                e.ProcessPublish = false;
                e.Response.ReasonCode = MqttPubAckReasonCode.NotAuthorized;
            }

            return Task.CompletedTask;
        };
        var (client, _, log) = _env.Client(MqttTestEnvironment.Options(Broker.Port, "no-status"), "no-status");

        await client.StartAsync(CancellationToken.None);
        await MqttTestEnvironment.ConnectedAsync(client);

        Assert.True(client.IsConnected);
        Assert.Equal(1, log.Count(LogLevel.Warning, "NotAuthorized"));
        Assert.Null(await Broker.Server.GetRetainedMessageAsync(client.StatusTopic));
    }

    [Fact]
    public async Task WhileTheBrokerIsDownTheNextAttemptWaitsForTheBackoffDelay()
    {
        var time = new FakeTimeProvider(DemoPlant.Now);
        var options = MqttTestEnvironment.Options(NothingListening(), "backoff");
        options.ReconnectDelay = TimeSpan.FromSeconds(10);
        options.ReconnectDelayMax = TimeSpan.FromSeconds(40);
        var (client, _, log) = _env.Client(time, options, "backoff");

        await client.StartAsync(CancellationToken.None);
        await WaitUntil(() => log.Count(LogLevel.Debug, "attempt 1 failed") == 1);

        // Refused connects come back at once; without the clock moving, no second attempt may start.
        await Task.Delay(300);
        Assert.Equal(0, log.Count(LogLevel.Debug, "attempt 2 failed"));
        Assert.Equal(1, log.Count(LogLevel.Warning, "cannot connect"));

        // The first delay is 5..10 s (10 s with jitter down to half).
        time.Advance(TimeSpan.FromSeconds(10));
        await WaitUntil(() => log.Count(LogLevel.Debug, "attempt 2 failed") == 1);
        await Task.Delay(300);
        Assert.Equal(0, log.Count(LogLevel.Debug, "attempt 3 failed"));

        time.Advance(TimeSpan.FromSeconds(20));
        await WaitUntil(() => log.Count(LogLevel.Debug, "attempt 3 failed") == 1);

        // The same failure is logged as a warning once, then at debug level only.
        Assert.Equal(1, log.Count(LogLevel.Warning, "cannot connect"));
        await client.StopAsync(CancellationToken.None);
    }

    private static int NothingListening()
    {
        using var listener = new System.Net.Sockets.TcpListener(System.Net.IPAddress.Loopback, 0);
        listener.Start();
        return ((System.Net.IPEndPoint)listener.LocalEndpoint).Port;
    }

    private static async Task WaitUntil(Func<bool> condition)
    {
        var deadline = DateTime.UtcNow + MqttTestEnvironment.Patience;
        while (!condition())
        {
            Assert.True(DateTime.UtcNow < deadline, "condition not met within the (generous) patience");
            await Task.Delay(20);
        }
    }

    private static string? Status(ReceivedMessage message) => Property(message, "status");

    private static string? Property(ReceivedMessage message, string name)
    {
        using var json = JsonDocument.Parse(message.Payload);
        return json.RootElement.TryGetProperty(name, out var value) ? value.GetString() : null;
    }
}
