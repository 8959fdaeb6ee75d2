using Microsoft.Extensions.Options;
using SiloWatch.Messaging;
using SiloWatch.Service.Hosting;
using SiloWatch.Storage;

namespace SiloWatch.Service.Ingest;

/// <summary>
/// Connects the MQTT client to the ingest and the outbound queue. Stop order matters: take no more
/// messages (the rest stay with the broker for the persistent session), drain the queues, publish
/// the last states, then say offline and disconnect.
/// </summary>
public sealed class TelemetryBridgeService(
    IOptions<MqttOptions> mqtt,
    IOptions<InstanceOptions> instance,
    BrokerEndpoint endpoint,
    TelemetryIngest ingest,
    OutboundQueue outbound,
    IngestCounters counters,
    PublishRefusals refusals,
    ITimeSeriesSink sink,
    Journal journal,
    TimeProvider time,
    ILoggerFactory loggers) : IHostedService, IAsyncDisposable
{
    private readonly ILogger _logger = loggers.CreateLogger<TelemetryBridgeService>();
    private readonly CancellationTokenSource _stopping = new();
    private SupervisedMqttClient? _client;
    private Task _publisher = Task.CompletedTask;

    public SupervisedMqttClient? Client => _client;

    public async Task StartAsync(CancellationToken cancellationToken)
    {
        var (host, port) = await endpoint.WhenReadyAsync(cancellationToken).ConfigureAwait(false);
        var options = mqtt.Value;
        // The embedded broker's port is only known now; the options instance is this service's own.
        options.Host = host;
        options.Port = port;
        ingest.RestoreSnapshots(journal);
        _client = new SupervisedMqttClient(options, instance.Value.Id, ingest.Subscriptions, ingest.OnMessageAsync,
            loggers.CreateLogger<SupervisedMqttClient>(), time);
        var client = _client;
        ingest.Start(() => client.ConnectionNumber, _stopping.Token);
        await _client.StartAsync(cancellationToken).ConfigureAwait(false);
        var publisher = new OutboundPublisher(outbound, counters, refusals, time, _logger);
        _publisher = Task.Run(() => publisher.RunAsync(_client, _stopping.Token), CancellationToken.None);
        _logger.LogInformation("Instance {Instance} owns {Silos} silo(s) over {Partitions} partition(s); broker {Host}:{Port}",
            instance.Value.Id, ingest.Pipelines.Count(), ingest.Workers.Count, host, port);
    }

    /// <summary>
    /// Stops in order and within <paramref name="cancellationToken"/> (the host's shutdown timeout):
    /// drain the queues for at most Instance:StopDrainTimeout (the rest stays with the broker), let the
    /// workers take their last checkpoint, save the snapshots, flush the store, publish the last states
    /// (at most 5 s), then say offline and disconnect (at most 5 s). The workers have ended before this
    /// returns, so nothing writes to the store once the host disposes it.
    /// </summary>
    public async Task StopAsync(CancellationToken cancellationToken)
    {
        var workersEnded = true;
        try
        {
            await ingest.DrainAsync(instance.Value.StopDrainTimeout, cancellationToken).ConfigureAwait(false);
        }
        catch (OperationCanceledException)
        {
            _logger.LogWarning("Stop timed out while draining the ingest queues; the workers are stopped without a last checkpoint");
            await _stopping.CancelAsync().ConfigureAwait(false);
            workersEnded = await ingest.WaitForWorkersAsync(TimeSpan.FromSeconds(2)).ConfigureAwait(false);
            if (!workersEnded)
            {
                _logger.LogError("Stop: a worker did not end within 2 s of its hard stop");
            }
        }

        if (workersEnded)
        {
            // The workers own the monitors while they run.
            ingest.SaveSnapshots(journal);
        }

        try
        {
            await sink.FlushAsync(cancellationToken).ConfigureAwait(false);
        }
        catch (OperationCanceledException)
        {
            _logger.LogWarning("Stop timed out while flushing the time-series sink");
        }

        outbound.Complete();
        try
        {
            await _publisher.WaitAsync(TimeSpan.FromSeconds(5), cancellationToken).ConfigureAwait(false);
        }
        catch (Exception ex) when (ex is TimeoutException or OperationCanceledException)
        {
            _logger.LogWarning("{Count} outbound message(s) not published before stop", outbound.Count);
        }

        await _stopping.CancelAsync().ConfigureAwait(false);
        if (_client is not null)
        {
            using var bounded = CancellationTokenSource.CreateLinkedTokenSource(cancellationToken);
            bounded.CancelAfter(TimeSpan.FromSeconds(5));
            await _client.StopAsync(bounded.Token).ConfigureAwait(false);
        }
    }

    public async ValueTask DisposeAsync()
    {
        await ingest.Acks.DisposeAsync().ConfigureAwait(false);
        _stopping.Dispose();
        if (_client is not null)
        {
            await _client.DisposeAsync().ConfigureAwait(false);
        }
    }
}
