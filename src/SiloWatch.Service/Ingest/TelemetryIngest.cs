using MQTTnet;
using MQTTnet.Protocol;
using SiloWatch.Messaging;
using SiloWatch.Monitoring;
using SiloWatch.Plant;
using SiloWatch.Service.Alarms;
using SiloWatch.Service.Hosting;
using SiloWatch.Storage;

namespace SiloWatch.Service.Ingest;

/// <summary>
/// Routes telemetry from the MQTT receive callback to per-silo pipelines, partitioned over a few
/// worker loops by silo; the callback only copies the payload into a bounded queue.
/// </summary>
public sealed class TelemetryIngest
{
    private readonly PartitionWorker[] _workers;
    private readonly Dictionary<string, SiloPipeline> _pipelinesByKey;
    private readonly Dictionary<string, SiloPipeline>.AlternateLookup<ReadOnlySpan<char>> _pipelinesBySpan;
    private readonly System.Threading.Channels.ChannelWriter<IngestMessage>[] _writerBySilo; // by registry index, fixed at start-up
    private readonly bool _ownsAll;
    private readonly PlantRegistry _registry;
    private readonly TopicScheme _topics;
    private readonly IngestCounters _counters;
    private readonly OutboundQueue _outbound;
    private readonly InstanceOptions _options;
    private readonly TimeProvider _time;
    private readonly RateLimitedLog _rejectLog;
    private readonly ILogger<TelemetryIngest> _logger;
    private readonly AlarmCommandRouter? _commands;
    private readonly IngestCheckpoints _checkpoints;
    private Task[] _running = [];
    private volatile bool _accepting = true;

    public TelemetryIngest(PlantRegistry registry, ShardMap shard, SiloModels models, MonitoringOptions monitoring,
        TelemetryDecoderOptions decoderOptions, TopicScheme topics, IngestCounters counters, OutboundQueue outbound,
        InstanceOptions options, ITimeSeriesSink sink, SeriesCatalog series, Journal journal, TimeProvider time, ILogger<TelemetryIngest> logger,
        SiloAlarmsFactory? alarms = null)
    {
        _checkpoints = new IngestCheckpoints(journal, sink, new AckWindow(), options.CheckpointInterval, options.CheckpointMessages);
        _registry = registry;
        _topics = topics;
        _counters = counters;
        _outbound = outbound;
        _options = options;
        _time = time;
        _logger = logger;
        _rejectLog = new RateLimitedLog(logger, time, TimeSpan.FromSeconds(10));
        var partitions = options.Partitions > 0 ? options.Partitions : Environment.ProcessorCount;
        partitions = Math.Max(1, Math.Min(partitions, Math.Max(1, shard.Owned.Count)));
        _workers = [.. Enumerable.Range(0, partitions).Select(i =>
            new PartitionWorker(i, options.QueueCapacity, time, options.PublishInterval, options.MinEvaluationInterval, options.Id, logger, _checkpoints)
            {
                CheckpointPhase = options.CheckpointInterval * i / partitions,
            })];
        _pipelinesByKey = new Dictionary<string, SiloPipeline>(StringComparer.Ordinal);
        _writerBySilo = new System.Threading.Channels.ChannelWriter<IngestMessage>[registry.Silos.Count];
        foreach (var silo in shard.Owned)
        {
            var monitor = new SiloMonitor(silo, models.For(silo), monitoring, time);
            var pipeline = new SiloPipeline(silo, monitor, decoderOptions, topics, counters, outbound, _rejectLog, sink, series);
            if (alarms is not null)
            {
                pipeline.AttachAlarms(alarms.Create(silo, models.For(silo)));
            }

            _pipelinesByKey[silo.Key] = pipeline;
            var worker = _workers[ShardMap.ShardOf(silo.Key, partitions)];
            worker.Add(pipeline);
            _writerBySilo[silo.Index] = worker.Writer;
        }

        _pipelinesBySpan = _pipelinesByKey.GetAlternateLookup<ReadOnlySpan<char>>();
        _commands = alarms?.CreateRouter(_pipelinesByKey);
        _ownsAll = shard.Owned.Count == registry.Silos.Count && options.ShardCount == 1 && options.Silos.Count == 0;
    }

    public IReadOnlyList<PartitionWorker> Workers => _workers;

    /// <summary>Acknowledgements of received messages, sent once a checkpoint covers them.</summary>
    public AckWindow Acks => _checkpoints.Acks;

    /// <summary>Checkpoints saved since start (one per silo and checkpoint).</summary>
    public long CheckpointsSaved => _checkpoints.Saved;

    public IEnumerable<SiloPipeline> Pipelines => _workers.SelectMany(w => w.Pipelines);

    /// <summary>
    /// MQTT topic filters: one per owned silo when sharded; a single wildcard when this instance
    /// owns the whole plant, so telemetry for silos the plant does not know is seen and dead-lettered too.
    /// With alarms, the command topics of the same silos follow.
    /// </summary>
    public IReadOnlyList<string> Subscriptions =>
    [
        .. _ownsAll ? [_topics.TelemetryFilterAll()] : _pipelinesByKey.Values.Select(p => _topics.TelemetryFilter(p.Silo.SiteId, p.Silo.SiloId)),
        .. _commands?.Subscriptions(_ownsAll) ?? [],
    ];

    /// <summary>
    /// Starts the workers and the acknowledgements; <paramref name="connection"/> tells the number of
    /// the MQTT client's current connection (<see cref="SupervisedMqttClient.ConnectionNumber"/>).
    /// </summary>
    public void Start(Func<long> connection, CancellationToken stoppingToken)
    {
        _checkpoints.Acks.Start(connection);
        _running = [.. _workers.Select(w => Task.Run(() => w.RunAsync(stoppingToken), CancellationToken.None))];
    }

    /// <summary>
    /// The MQTT receive callback: route by topic, copy, enqueue. Never throws. The message is
    /// acknowledged later, in arrival order: telemetry once a checkpoint of its silo covers it,
    /// anything else once handled here.
    /// </summary>
    public async Task OnMessageAsync(MqttApplicationMessageReceivedEventArgs e)
    {
        if (!_accepting)
        {
            // Stopping: leave the message unacknowledged so the broker delivers it again to the next session.
            e.AutoAcknowledge = false;
            return;
        }

        var ticket = _checkpoints.Acks.Register(e);
        if (await RouteAsync(e, ticket).ConfigureAwait(false))
        {
            _checkpoints.Acks.Complete(ticket);
        }
    }

    /// <returns>True when the message is done with here; false when it went to a worker or was not taken.</returns>
    private async Task<bool> RouteAsync(MqttApplicationMessageReceivedEventArgs e, AckTicket ticket)
    {
        var topic = e.ApplicationMessage.Topic;
        if (_commands is not null && _commands.IsCommand(topic))
        {
            _commands.Handle(e.ApplicationMessage);
            return true;
        }

        if (!_topics.TryGetTelemetrySiloKey(topic, out var siloKey))
        {
            if (topic.StartsWith(_topics.Prefix + "/" + TopicScheme.Version + "/telemetry/", StringComparison.Ordinal))
            {
                RejectTopic(topic, "telemetry topic levels are not valid site and silo ids");
            }

            return true;
        }

        var receivedMs = _time.GetUtcNow().ToUnixTimeMilliseconds();
        _counters.MessageReceived();
        if (!_pipelinesBySpan.TryGetValue(siloKey, out var pipeline))
        {
            var known = _registry.TryGetSilo(siloKey, out _);
            RejectTopic(topic, known ? "silo is not owned by this instance (shard)" : "no such site/silo in the plant definition");
            return true;
        }

        var message = IngestMessage.Copy(pipeline, e.ApplicationMessage.Payload, receivedMs, ticket);
        var writer = _writerBySilo[pipeline.Silo.Index];
        pipeline.Enqueuing();
        if (writer.TryWrite(message))
        {
            return false;
        }

        if (_options.QueueFullMode == QueueFullMode.Drop)
        {
            pipeline.Dequeued();
            _counters.QueueDroppedOne();
            message.Release();
            _rejectLog.Warn("queue-full", pipeline.Silo.SiteId, pipeline.Silo.SiloId, null, "partition queue full: message dropped");
            return true;
        }

        _counters.QueueFullWaited();
        try
        {
            await writer.WriteAsync(message).ConfigureAwait(false);
        }
        catch (System.Threading.Channels.ChannelClosedException)
        {
            // Stopping: not taken, so not acknowledged; the broker sends it again to the session.
            pipeline.Dequeued();
            message.Release();
            _checkpoints.Acks.Abandon(ticket);
        }

        return false;
    }

    private void RejectTopic(string topic, string detail)
    {
        _counters.Reject(RejectReason.UnknownSilo);
        _topics.TryParseTelemetry(topic, out var site, out var silo);
        site = site.Length > 0 ? site : "invalid-topic";
        silo = silo.Length > 0 ? silo : "invalid-topic";
        _rejectLog.Warn(DeadLetterCodec.ReasonName(RejectReason.UnknownSilo), site, silo, null, detail);
        var rejection = new TelemetryRejection(RejectReason.UnknownSilo, detail, site, silo, null, null, null, topic.Length > 200 ? topic[..200] : topic);
        _outbound.Enqueue(new OutboundMessage(_topics.DeadLetter(site, silo), DeadLetterCodec.Encode(rejection, _time.GetUtcNow().ToUnixTimeMilliseconds()),
            false, MqttQualityOfServiceLevel.AtLeastOnce));
    }

    /// <summary>Snapshot kind of a monitor's tare, load shares and calibration in the journal.</summary>
    public const string MonitorSnapshotKind = "monitor";

    // Snapshots may hold NaN (e.g. no mass known before a tare): keep them as named literals.
    private static readonly System.Text.Json.JsonSerializerOptions SnapshotJson = new()
    {
        NumberHandling = System.Text.Json.Serialization.JsonNumberHandling.AllowNamedFloatingPointLiterals,
    };

    /// <summary>
    /// Restores each silo from the journal (before the workers start): its checkpoint (publisher
    /// sequence positions, open downsampling intervals) and the newer of the checkpoint's monitor
    /// snapshot and the monitor snapshot saved on its own (tare, load shares, calibration).
    /// </summary>
    public void RestoreSnapshots(Journal journal)
    {
        foreach (var pipeline in _pipelinesByKey.Values)
        {
            var checkpoint = _checkpoints.Load(pipeline.Silo.Key, out var checkpointProblem);
            if (checkpointProblem is not null)
            {
                _logger.LogWarning("Checkpoint of {Silo} not used: {Problem}; its redelivered messages are processed as new", pipeline.Silo.Key, checkpointProblem);
            }

            if (checkpoint is not null)
            {
                foreach (var problem in pipeline.RestoreCheckpoint(checkpoint))
                {
                    _logger.LogWarning("Resuming {Silo}: {Problem}", pipeline.Silo.Key, problem);
                }

                _logger.LogInformation("Resumed {Silo} from its checkpoint of {Taken}: {Publishers} publisher position(s), {Intervals} open interval(s)",
                    pipeline.Silo.Key, DateTimeOffset.FromUnixTimeMilliseconds(checkpoint.TakenMs), checkpoint.Sequences.Count, checkpoint.Intervals.Count);
            }

            var json = journal.LoadSnapshot(pipeline.Silo.Key, MonitorSnapshotKind);
            if (json is null && checkpoint is null)
            {
                continue;
            }

            try
            {
                var snapshot = json is null ? null : System.Text.Json.JsonSerializer.Deserialize<MonitorSnapshot>(json, SnapshotJson);
                if (checkpoint is not null && (snapshot is null || checkpoint.Monitor.TakenMs > snapshot.TakenMs))
                {
                    snapshot = checkpoint.Monitor;
                }

                if (snapshot is null)
                {
                    continue;
                }

                foreach (var problem in pipeline.Monitor.Restore(snapshot))
                {
                    _logger.LogWarning("Restoring {Silo}: {Problem}", pipeline.Silo.Key, problem);
                }

                _logger.LogInformation("Restored {Silo} from its snapshot of {Taken}", pipeline.Silo.Key, DateTimeOffset.FromUnixTimeMilliseconds(snapshot.TakenMs));
            }
            catch (Exception ex) when (ex is System.Text.Json.JsonException or ArgumentException or NotSupportedException)
            {
                _logger.LogWarning(ex, "Snapshot of {Silo} could not be read; starting without it", pipeline.Silo.Key);
            }
        }
    }

    /// <summary>Saves each silo's snapshot (after the workers have stopped, or from the silo's own worker).</summary>
    public void SaveSnapshots(Journal journal)
    {
        foreach (var pipeline in _pipelinesByKey.Values)
        {
            journal.SaveSnapshot(pipeline.Silo.Key, MonitorSnapshotKind, System.Text.Json.JsonSerializer.Serialize(pipeline.Monitor.Snapshot(), SnapshotJson));
        }
    }

    /// <summary>
    /// Stops taking messages, drains every queue, waits for the workers' last publish and checkpoint,
    /// and for the acknowledgements they release.
    /// </summary>
    public Task DrainAsync(CancellationToken cancellationToken) => DrainAsync(Timeout.InfiniteTimeSpan, cancellationToken);

    /// <summary>
    /// As <see cref="DrainAsync(CancellationToken)"/>, but the queues are drained for at most
    /// <paramref name="budget"/>: then each worker is cut short (<see cref="PartitionWorker.Cut"/>), so it
    /// leaves what is still queued to the broker, checkpoints what it has processed and ends.
    /// </summary>
    public async Task DrainAsync(TimeSpan budget, CancellationToken cancellationToken)
    {
        _accepting = false;
        foreach (var worker in _workers)
        {
            worker.Writer.TryComplete();
        }

        var running = Task.WhenAll(_running);
        try
        {
            await running.WaitAsync(budget, cancellationToken).ConfigureAwait(false);
        }
        catch (TimeoutException)
        {
            _logger.LogWarning("Stop: the ingest queues were not drained within {Budget} ({Messages} message(s) still queued); " +
                "the rest is left to the broker for redelivery", budget, _workers.Sum(w => w.Depth));
            foreach (var worker in _workers)
            {
                worker.Cut();
            }

            await running.WaitAsync(cancellationToken).ConfigureAwait(false);
        }

        await _checkpoints.Acks.DrainAsync(cancellationToken).ConfigureAwait(false);
        _logger.LogInformation("Ingest drained: {Messages} messages, {Samples} samples accepted, {Rejected} rejected, {Left} left queued for redelivery",
            _counters.Messages, _counters.Samples, _counters.RejectedTotal, _workers.Sum(w => w.LeftQueued));
    }

    /// <summary>True once every worker has ended (drained, cut short or stopped hard).</summary>
    public bool WorkersStopped => _running.All(t => t.IsCompleted);

    /// <summary>Waits up to <paramref name="limit"/> for the workers to end (after a hard stop: they end at their next message or wake-up).</summary>
    public async Task<bool> WaitForWorkersAsync(TimeSpan limit)
    {
        try
        {
            await Task.WhenAll(_running).WaitAsync(limit).ConfigureAwait(false);
        }
        catch (TimeoutException)
        {
        }

        return WorkersStopped;
    }
}
