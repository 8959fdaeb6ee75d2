using Microsoft.Extensions.Options;
using SiloWatch.Messaging;

namespace SiloWatch.Service.Hosting;

/// <summary>
/// With no broker configured (Mqtt:Host empty) the service hosts an MQTT broker in-process on
/// loopback, so the demo needs nothing installed. Started before the MQTT client, stopped after it.
/// </summary>
public sealed class EmbeddedBrokerService(IOptions<MqttOptions> mqtt, IOptions<EmbeddedBrokerOptions> embedded,
    BrokerEndpoint endpoint, ILogger<EmbeddedBrokerService> logger) : IHostedService, IAsyncDisposable
{
    private EmbeddedBroker? _broker;

    public async Task StartAsync(CancellationToken cancellationToken)
    {
        if (!string.IsNullOrWhiteSpace(mqtt.Value.Host))
        {
            endpoint.Set(mqtt.Value.Host, mqtt.Value.Port, embedded: false);
            return;
        }

        _broker = await EmbeddedBroker.StartAsync(embedded.Value.Port, logger, cancellationToken).ConfigureAwait(false);
        logger.LogInformation("No broker configured: embedded MQTT broker listening on 127.0.0.1:{Port}", _broker.Port);
        endpoint.Set("127.0.0.1", _broker.Port, embedded: true);
    }

    public async Task StopAsync(CancellationToken cancellationToken)
    {
        if (_broker is not null)
        {
            await _broker.DisposeAsync().ConfigureAwait(false);
            _broker = null;
        }
    }

    public async ValueTask DisposeAsync()
    {
        if (_broker is not null)
        {
            await _broker.DisposeAsync().ConfigureAwait(false);
        }
    }
}

/// <summary>The in-process broker used when no broker is configured. Section <see cref="SectionName"/>.</summary>
public sealed class EmbeddedBrokerOptions
{
    public const string SectionName = "EmbeddedBroker";

    /// <summary>Loopback port of the embedded broker. Default 1883; 0 picks a free port.</summary>
    public int Port { get; set; } = 1883;
}
