using System.Threading.Channels;

namespace SiloWatch.Service.Ingest;

/// <summary>
/// One worker loop: drains its partition's queue, one silo pipeline at a time, and publishes the
/// estimates of its silos each interval. No locks: a silo belongs to exactly one worker.
/// </summary>
public sealed class PartitionWorker
{
    private readonly Channel<IngestMessage> _queue;
    private readonly List<SiloPipeline> _pipelines = [];
    private readonly TimeProvider _time;
    private readonly TimeSpan _publishInterval;
    private readonly string _instanceId;
    private readonly ILogger _logger;

    public PartitionWorker(int index, int capacity, TimeProvider time, TimeSpan publishInterval, string instanceId, ILogger logger)
    {
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

    /// <summary>Runs until the queue is completed and drained; then publishes a last estimate of every silo.</summary>
    public async Task RunAsync(CancellationToken stoppingToken)
    {
        var reader = _queue.Reader;
        var nextPublish = _time.GetUtcNow() + _publishInterval;
        while (true)
        {
            var wait = nextPublish - _time.GetUtcNow();
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

                if (_time.GetUtcNow() >= nextPublish)
                {
                    break;
                }
            }

            if (_time.GetUtcNow() >= nextPublish)
            {
                PublishAll();
                nextPublish = _time.GetUtcNow() + _publishInterval;
            }

            if (reader.Completion.IsCompleted)
            {
                break;
            }
        }

        PublishAll();
        SaveSnapshots();
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
