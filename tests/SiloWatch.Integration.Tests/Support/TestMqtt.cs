using System.Collections.Concurrent;
using System.Text;
using System.Text.Json;
using MQTTnet;
using MQTTnet.Protocol;

namespace SiloWatch.Integration.Tests.Support;

/// <summary>A gateway or an observer on the broker: publishes telemetry in the contract and collects what it receives.</summary>
public sealed class TestMqtt : IAsyncDisposable
{
    private readonly IMqttClient _client;
    private readonly Dictionary<string, long> _seq = new(StringComparer.Ordinal);

    private TestMqtt(IMqttClient client) => _client = client;

    public ConcurrentQueue<(string Topic, string Payload)> Received { get; } = new();

    public string Publisher { get; private set; } = "gw-test";

    public static Task<TestMqtt> ConnectAsync(int port, string clientId, params string[] subscriptions) =>
        ConnectAsync(port, clientId, login: null, subscriptions);

    /// <summary>Connects with a user name and password (<paramref name="login"/>), e.g. to a broker with an ACL.</summary>
    public static async Task<TestMqtt> ConnectAsync(int port, string clientId, (string User, string Password)? login, params string[] subscriptions)
    {
        var client = new MqttClientFactory().CreateMqttClient();
        var mqtt = new TestMqtt(client) { Publisher = clientId };
        client.ApplicationMessageReceivedAsync += e =>
        {
            mqtt.Received.Enqueue((e.ApplicationMessage.Topic, Encoding.UTF8.GetString(e.ApplicationMessage.Payload)));
            return Task.CompletedTask;
        };
        var builder = new MqttClientOptionsBuilder()
            .WithTcpServer("127.0.0.1", port)
            .WithClientId(clientId)
            .WithProtocolVersion(MQTTnet.Formatter.MqttProtocolVersion.V500)
            .WithCleanStart(true);
        if (login is { } credentials)
        {
            builder.WithCredentials(credentials.User, credentials.Password);
        }

        var result = await client.ConnectAsync(builder.Build());
        Assert.Equal(MqttClientConnectResultCode.Success, result.ResultCode);
        foreach (var filter in subscriptions)
        {
            await client.SubscribeAsync(new MqttClientSubscribeOptionsBuilder()
                .WithTopicFilter(f => f.WithTopic(filter).WithQualityOfServiceLevel(MqttQualityOfServiceLevel.AtLeastOnce))
                .Build());
        }

        return mqtt;
    }

    /// <summary>Publishes at QoS 1; the result carries the broker's PUBACK reason (e.g. NotAuthorized from its ACL).</summary>
    public Task<MqttClientPublishResult> PublishRawAsync(string topic, string payload, string? user = null)
    {
        var message = new MqttApplicationMessageBuilder()
            .WithTopic(topic)
            .WithPayload(Encoding.UTF8.GetBytes(payload))
            .WithQualityOfServiceLevel(MqttQualityOfServiceLevel.AtLeastOnce);
        if (user is not null)
        {
            message.WithUserProperty("user", Encoding.UTF8.GetBytes(user).AsMemory());
        }

        return _client.PublishAsync(message.Build());
    }

    /// <summary>Publishes one batch for a silo with the next sequence number of this publisher and topic.</summary>
    public async Task<long> PublishBatchAsync(string site, string silo, DateTimeOffset ts, IEnumerable<(string Sensor, double Value, string Unit)> samples, long? seq = null)
    {
        var topic = $"silowatch/v1/telemetry/{site}/{silo}";
        var next = seq ?? (_seq.TryGetValue(topic, out var last) ? last + 1 : 1);
        _seq[topic] = Math.Max(next, _seq.GetValueOrDefault(topic));
        var payload = JsonSerializer.Serialize(new
        {
            pub = Publisher,
            seq = next,
            ts = ts.ToUnixTimeMilliseconds(),
            samples = samples.Select(s => new { sensor = s.Sensor, value = s.Value, unit = s.Unit }),
        });
        await PublishRawAsync(topic, payload);
        return next;
    }

    /// <summary>Waits for a condition with a generous upper bound (not a speed check).</summary>
    public static async Task WaitForAsync(Func<bool> condition, string what, TimeSpan? limit = null)
    {
        var deadline = DateTime.UtcNow + (limit ?? TimeSpan.FromSeconds(30));
        while (!condition())
        {
            if (DateTime.UtcNow > deadline)
            {
                Assert.Fail($"timed out waiting for: {what}");
            }

            await Task.Delay(50);
        }
    }

    public async ValueTask DisposeAsync()
    {
        if (_client.IsConnected)
        {
            await _client.DisconnectAsync();
        }

        _client.Dispose();
    }
}
