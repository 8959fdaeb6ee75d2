using Xunit.Abstractions;
using System.Text;
using System.Threading.Channels;
using MQTTnet;
using MQTTnet.Protocol;

namespace SiloWatch.Messaging.Tests.Support;

/// <summary>A message as a test observer received it.</summary>
public sealed record ReceivedMessage(string Topic, string Payload, bool Retain);

/// <summary>
/// Builds supervised clients for tests, each with its own collecting logger, and a channel
/// of what it received. Waits are generous upper bounds, never speed checks.
/// </summary>
public sealed class MqttTestEnvironment(ITestOutputHelper output) : IAsyncDisposable
{
    public static readonly TimeSpan Patience = TimeSpan.FromSeconds(30);

    private readonly List<SupervisedMqttClient> _clients = [];

    public static MqttOptions Options(int port, string clientId) => new()
    {
        Host = "127.0.0.1",
        Port = port,
        ClientId = clientId,
        KeepAlive = TimeSpan.FromSeconds(5),
        ReconnectDelay = TimeSpan.FromMilliseconds(200),
        ReconnectDelayMax = TimeSpan.FromSeconds(1),
        ConnectTimeout = TimeSpan.FromSeconds(5),
        WillDelay = TimeSpan.Zero,
        SessionExpiry = TimeSpan.FromMinutes(10),
    };

    public (SupervisedMqttClient Client, Channel<ReceivedMessage> Received, CollectingLogger Log) Client(
        MqttOptions options, string instanceId, params string[] subscriptions) => Client(TimeProvider.System, options, instanceId, subscriptions);

    public (SupervisedMqttClient Client, Channel<ReceivedMessage> Received, CollectingLogger Log) Client(
        TimeProvider time, MqttOptions options, string instanceId, params string[] subscriptions)
    {
        var received = Channel.CreateUnbounded<ReceivedMessage>();
        var log = new CollectingLogger(options.ClientId, output);
        var client = new SupervisedMqttClient(options, instanceId, subscriptions, e =>
        {
            var message = e.ApplicationMessage;
            received.Writer.TryWrite(new ReceivedMessage(message.Topic, Encoding.UTF8.GetString(message.Payload), message.Retain));
            return Task.CompletedTask;
        }, log, time);
        _clients.Add(client);
        return (client, received, log);
    }

    public static async Task<ReceivedMessage> NextAsync(Channel<ReceivedMessage> received, Func<ReceivedMessage, bool>? match = null)
    {
        using var timeout = new CancellationTokenSource(Patience);
        while (true)
        {
            var message = await received.Reader.ReadAsync(timeout.Token);
            if (match is null || match(message))
            {
                return message;
            }
        }
    }

    public static async Task ConnectedAsync(SupervisedMqttClient client)
    {
        using var timeout = new CancellationTokenSource(Patience);
        await client.WaitUntilConnectedAsync(timeout.Token);
    }

    public static Task PublishAsync(SupervisedMqttClient client, string topic, string payload, bool retain = false) =>
        client.PublishAsync(topic, Encoding.UTF8.GetBytes(payload), retain, MqttQualityOfServiceLevel.AtLeastOnce, CancellationToken.None);

    public async ValueTask DisposeAsync()
    {
        foreach (var client in _clients)
        {
            await client.DisposeAsync();
        }
    }
}
