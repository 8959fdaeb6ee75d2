using MQTTnet;
using MQTTnet.Protocol;

namespace SiloWatch.Simulator.Mqtt;

/// <summary>
/// Publishes telemetry with QoS 1. A lost connection is retried by a supervised loop here (never from
/// the disconnect handler); messages not acknowledged are sent again in order after the reconnect.
/// </summary>
public sealed class MqttPublisher : IAsyncDisposable
{
    private readonly IMqttClient _client;
    private readonly MqttClientOptions _options;
    private readonly TextWriter? _log;

    public MqttPublisher(string host, int port, string? username, string? password, string clientId, TextWriter? log)
    {
        _log = log;
        _client = new MqttClientFactory().CreateMqttClient();
        var builder = new MqttClientOptionsBuilder()
            .WithTcpServer(host, port)
            .WithClientId(clientId)
            .WithCleanStart(true)
            .WithKeepAlivePeriod(TimeSpan.FromSeconds(30))
            .WithTimeout(TimeSpan.FromSeconds(10));
        if (!string.IsNullOrEmpty(username))
        {
            builder = builder.WithCredentials(username, password ?? "");
        }

        _options = builder.Build();
    }

    /// <summary>Publishes that failed and were retried after a reconnect.</summary>
    public long Retries { get; private set; }

    public bool IsConnected => _client.IsConnected;

    /// <summary>Connects, retrying while the broker cannot be reached; a refused login is an error, not retried.</summary>
    public async Task ConnectAsync(CancellationToken ct)
    {
        var delay = TimeSpan.FromMilliseconds(250);
        while (true)
        {
            ct.ThrowIfCancellationRequested();
            try
            {
                var result = await _client.ConnectAsync(_options, ct).ConfigureAwait(false);
                if (result.ResultCode != MqttClientConnectResultCode.Success)
                {
                    throw new InvalidOperationException($"MQTT broker refused the connection: {result.ResultCode} {result.ReasonString}");
                }

                return;
            }
            catch (Exception ex) when (ex is MQTTnet.Exceptions.MqttCommunicationException or TimeoutException or System.Net.Sockets.SocketException)
            {
                _log?.WriteLine($"MQTT: cannot reach the broker ({ex.Message}); retrying in {delay.TotalSeconds:F1} s");
                await Task.Delay(delay, ct).ConfigureAwait(false);
                delay = TimeSpan.FromMilliseconds(Math.Min(delay.TotalMilliseconds * 2, 5000));
            }
        }
    }

    /// <summary>Publishes the messages in order, pipelined; on a broken link reconnects and sends the rest.</summary>
    public async Task PublishAsync(IReadOnlyList<(string Topic, byte[] Payload)> messages, CancellationToken ct)
    {
        var next = 0;
        while (next < messages.Count)
        {
            ct.ThrowIfCancellationRequested();
            if (!_client.IsConnected)
            {
                _log?.WriteLine("MQTT: connection lost; reconnecting (messages are kept)");
                await ConnectAsync(ct).ConfigureAwait(false);
            }

            var tasks = new List<Task<MqttClientPublishResult>>(messages.Count - next);
            for (var i = next; i < messages.Count; i++)
            {
                var message = new MqttApplicationMessageBuilder()
                    .WithTopic(messages[i].Topic)
                    .WithPayload(messages[i].Payload)
                    .WithQualityOfServiceLevel(MqttQualityOfServiceLevel.AtLeastOnce)
                    .Build();
                tasks.Add(_client.PublishAsync(message, ct));
            }

            var sent = 0;
            try
            {
                foreach (var task in tasks)
                {
                    var result = await task.ConfigureAwait(false);
                    if (!result.IsSuccess)
                    {
                        throw new InvalidOperationException($"MQTT broker did not accept a message on '{messages[next + sent].Topic}': {result.ReasonCode} {result.ReasonString}");
                    }

                    sent++;
                }

                next += sent;
            }
            catch (Exception ex) when (ct.IsCancellationRequested && ex is not OperationCanceledException)
            {
                // MQTTnet reports a cancelled wait for an acknowledgement as a time-out: it is a cancellation.
                throw new OperationCanceledException("publishing was cancelled", ex, ct);
            }
            catch (Exception ex) when (ex is MQTTnet.Exceptions.MqttCommunicationException or MQTTnet.Exceptions.MqttClientNotConnectedException or TimeoutException)
            {
                // Observe the remaining tasks so that their failures do not go unobserved; resend from the first unacknowledged.
                foreach (var task in tasks.Skip(sent))
                {
                    _ = task.ContinueWith(t => t.Exception, TaskScheduler.Default);
                }

                next += sent;
                Retries += messages.Count - next;
                _log?.WriteLine($"MQTT: publish failed ({ex.Message}); will resend {messages.Count - next} message(s)");
                await Task.Delay(200, ct).ConfigureAwait(false);
            }
        }
    }

    public async ValueTask DisposeAsync()
    {
        if (_client.IsConnected)
        {
            try
            {
                await _client.DisconnectAsync(new MqttClientDisconnectOptionsBuilder().Build(), CancellationToken.None).ConfigureAwait(false);
            }
            catch (MQTTnet.Exceptions.MqttCommunicationException)
            {
                // Going away anyway.
            }
        }

        _client.Dispose();
    }
}
