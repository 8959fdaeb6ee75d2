using System.Threading.Channels;

namespace SiloWatch.Service.Ingest;

/// <summary>
/// One worker loop: drains its partition's queue, one silo pipeline at a time, publishes the
/// estimates of its silos each interval, and checkpoints them (see <see cref="IngestCheckpoints"/>)
/// at least every checkpoint interval, acknowledging the messages a checkpoint covers. No locks: a
/// silo belongs to exactly one worker.
/// </summary>
public sealed class PartitionWorker
{
    private readonly Channel<IngestMessage> _queue;
    private readonly List<SiloPipeline> _pipelines = [];
    private readonly List<AckTicket> _uncheckpointed = [];
    private readonly TimeProvider _time;
    private readonly TimeSpan _publishInterval;
    private readonly string _instanceId;
    private readonly ILogger _logger;
    private readonly IngestCheckpoints _checkpoints;
    private DateTimeOffset _nextCheckpoint = DateTimeOffset.MaxValue;
    private DateTimeOffset _lastCheckpoint = DateTimeOffset.MinValue;

    /// <summary>
    /// When the queue runs dry with messages waiting for their checkpoint, it is taken this soon
    /// after the last one: a broker whose in-flight window is full sends nothing more until it gets
    /// acknowledgements, and a quiet feed should not wait the whole interval either.
    /// </summary>
    public static readonly TimeSpan IdleCheckpointGap = TimeSpan.FromMilliseconds(50);

    public PartitionWorker(int index, int capacity, TimeProvider time, TimeSpan publishInterval, string instanceId, ILogger logger,
        IngestCheckpoints checkpoints)
    {
        _checkpoints = checkpoints;
        Index = index;
        _queue = Channel.CreateBounded<IngestMessage>(new BoundedChannelOptions(capacity)
        {
            FullMode = BoundedChannelFullMode.Wait,
            SingleReader = true,
            SingleWriter = false,
        });
        _time = time;
        _publishInterval = publishInterval;
        _instanceId = instanceId;
        _logger = logger;
    }

    public int Index { get; }

    public int Depth => _queue.Reader.Count;

    public IReadOnlyList<SiloPipeline> Pipelines => _pipelines;

    public ChannelWriter<IngestMessage> Writer => _queue.Writer;

    public void Add(SiloPipeline pipeline) => _pipelines.Add(pipeline);

    /// <summary>Messages processed and waiting for their checkpoint.</summary>
    public int Uncheckpointed => Volatile.Read(ref _uncheckpointedCount);

    private int _uncheckpointedCount;

    /// <summary>Runs until the queue is completed and drained; then publishes a last estimate of every silo.</summary>
    public async Task RunAsync(CancellationToken stoppingToken)
    {
        var reader = _queue.Reader;
        var nextPublish = _time.GetUtcNow() + _publishInterval;
        while (true)
        {
            if (stoppingToken.IsCancellationRequested)
            {
                return; // a hard stop
            }

            var checkpointAt = _nextCheckpoint;
            if (reader.Count == 0 && _uncheckpointed.Count > 0)
            {
                var idle = _lastCheckpoint + IdleCheckpointGap;
                checkpointAt = idle < checkpointAt ? idle : checkpointAt;
                if (_time.GetUtcNow() >= checkpointAt)
                {
                    await CheckpointAsync(stoppingToken).ConfigureAwait(false);
                    continue;
                }
            }

            var wake = nextPublish < checkpointAt ? nextPublish : checkpointAt;
            var wait = wake - _time.GetUtcNow();
            if (wait > TimeSpan.Zero && reader.Count == 0)
            {
                using var timeout = new CancellationTokenSource(wait, _time);
                using var abort = stoppingToken.Register(static t => ((CancellationTokenSource)t!).Cancel(), timeout);
                try
                {
                    if (!await reader.WaitToReadAsync(timeout.Token).ConfigureAwait(false))
                    {
                        break; // completed and drained
                    }
                }
                catch (OperationCanceledException) when (timeout.IsCancellationRequested)
                {
                    // Publish interval reached, or a hard stop: the normal stop completes the queue instead.
                    if (stoppingToken.IsCancellationRequested)
                    {
                        return;
                    }
                }
            }

            while (reader.TryRead(out var message))
            {
                try
                {
                    message.Pipeline.Process(message.Buffer.AsSpan(0, message.Length), message.ReceivedMs);
                }
                catch (Exception ex)
                {
                    // Input cannot crash the service: the decoder does not throw on bad input, so this is a bug; keep going.
                    _logger.LogError(ex, "Processing a message of {Silo} failed", message.Pipeline.Silo.Key);
                }
                finally
                {
                    message.Release();
                }

                if (message.Ticket is { } ticket)
                {
                    if (_uncheckpointed.Count == 0)
                    {
                        _nextCheckpoint = _time.GetUtcNow() + _checkpoints.Interval;
                    }

                    _uncheckpointed.Add(ticket);
                    Volatile.Write(ref _uncheckpointedCount, _uncheckpointed.Count);
                }

                if (_time.GetUtcNow() >= nextPublish || _uncheckpointed.Count >= _checkpoints.MaxMessages)
                {
                    break;
                }
            }

            if (_time.GetUtcNow() >= nextPublish)
            {
                PublishAll();
                nextPublish = _time.GetUtcNow() + _publishInterval;
            }

            if (_uncheckpointed.Count >= _checkpoints.MaxMessages || _time.GetUtcNow() >= _nextCheckpoint)
            {
                await CheckpointAsync(stoppingToken).ConfigureAwait(false);
            }

            if (reader.Completion.IsCompleted)
            {
                break;
            }
        }

        PublishAll();
        SaveSnapshots();
        await CheckpointAsync(stoppingToken).ConfigureAwait(false);
    }

    private async Task CheckpointAsync(CancellationToken stoppingToken)
    {
        if (stoppingToken.IsCancellationRequested)
        {
            return; // a hard stop: what is not checkpointed stays with the broker
        }

        try
        {
            await _checkpoints.SaveAsync(_pipelines, _uncheckpointed, _time.GetUtcNow().ToUnixTimeMilliseconds(), stoppingToken).ConfigureAwait(false);
            _nextCheckpoint = DateTimeOffset.MaxValue;
            _lastCheckpoint = _time.GetUtcNow();
        }
        catch (Exception ex) when (ex is not OperationCanceledException)
        {
            // The messages stay unacknowledged (the broker keeps them) and the next checkpoint tries again.
            _logger.LogError(ex, "Checkpoint of partition {Partition} failed; {Messages} message(s) stay unacknowledged", Index, _uncheckpointed.Count);
            _nextCheckpoint = _time.GetUtcNow() + _checkpoints.Interval;
            _lastCheckpoint = _time.GetUtcNow();
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
            // hard stop
        }

        Volatile.Write(ref _uncheckpointedCount, _uncheckpointed.Count);
    }

    private void SaveSnapshots()
    {
        var now = _time.GetUtcNow().ToUnixTimeMilliseconds();
        foreach (var pipeline in _pipelines)
        {
            try
            {
                pipeline.SaveSnapshots(now);
            }
            catch (Exception ex)
            {
                _logger.LogError(ex, "Saving the snapshots of {Silo} failed", pipeline.Silo.Key);
            }
        }
    }

    private void PublishAll()
    {
        var now = _time.GetUtcNow().ToUnixTimeMilliseconds();
        foreach (var pipeline in _pipelines)
        {
            try
            {
                pipeline.Publish(now, _instanceId);
            }
            catch (Exception ex)
            {
                _logger.LogError(ex, "Evaluating the estimate of {Silo} failed", pipeline.Silo.Key);
            }
        }
    }
}
