using System.Threading.Channels;

namespace SiloWatch.Service.Ingest;

/// <summary>
/// One worker loop: drains its partition's queue, one silo pipeline at a time, evaluates and
/// publishes its silos, and checkpoints them (see <see cref="IngestCheckpoints"/>) at least every
/// checkpoint interval, acknowledging the messages a checkpoint covers. No locks: a silo belongs to
/// exactly one worker.
/// <para>
/// When a silo's message brings new samples, the silo is evaluated at once, or, when its last
/// evaluation is less than the minimum evaluation interval ago, as soon as that interval has passed:
/// its state follows its newest sample within the minimum interval, and a fast feed is evaluated no
/// more often than that. A silo not evaluated for a publish interval (no new samples) is evaluated
/// on the service clock then, because alarm delays, shelving expiry and the staleness of a silo with
/// nothing queued (see SiloMonitor.ArrivalsSeenUntil) run on that clock.
/// Evaluating at the samples' own time (<see cref="SiloPipeline.FollowsSampleTime"/>, replays) keeps
/// the publish interval only.
/// </para>
/// </summary>
public sealed class PartitionWorker
{
    private readonly Channel<IngestMessage> _queue;
    private readonly List<SiloPipeline> _pipelines = [];
    private readonly List<AckTicket> _uncheckpointed = [];
    private readonly TimeProvider _time;
    private readonly long _publishIntervalMs;
    private readonly long _minEvaluationMs;
    private readonly string _instanceId;
    private readonly ILogger _logger;
    private readonly IngestCheckpoints _checkpoints;

    // Each silo once, due a publish interval after its last evaluation (entries found early are put back).
    private readonly PriorityQueue<SiloPipeline, long> _timed = new();

    // Silos with new samples whose minimum interval since their last evaluation has not passed yet.
    private readonly PriorityQueue<SiloPipeline, long> _held = new();
    private DateTimeOffset _nextCheckpoint = DateTimeOffset.MaxValue;
    private DateTimeOffset _lastCheckpoint = DateTimeOffset.MinValue;
    private PendingCheckpoint? _pending; // the checkpoint being stored while the worker goes on

    /// <summary>
    /// When the queue runs dry with messages waiting for their checkpoint, it is taken this soon
    /// after the last one: a broker whose in-flight window is full sends nothing more until it gets
    /// acknowledgements, and a quiet feed should not wait the whole interval either.
    /// </summary>
    public static readonly TimeSpan IdleCheckpointGap = TimeSpan.FromMilliseconds(50);

    public PartitionWorker(int index, int capacity, TimeProvider time, TimeSpan publishInterval, TimeSpan minEvaluationInterval,
        string instanceId, ILogger logger, IngestCheckpoints checkpoints)
    {
        ArgumentOutOfRangeException.ThrowIfLessThanOrEqual(publishInterval, TimeSpan.Zero);
        ArgumentOutOfRangeException.ThrowIfLessThan(minEvaluationInterval, TimeSpan.Zero);
        _checkpoints = checkpoints;
        Index = index;
        _queue = Channel.CreateBounded<IngestMessage>(new BoundedChannelOptions(capacity)
        {
            FullMode = BoundedChannelFullMode.Wait,
            SingleReader = true,
            SingleWriter = false,
        });
        _time = time;
        _publishIntervalMs = Math.Max(1, (long)publishInterval.TotalMilliseconds);
        _minEvaluationMs = Math.Min(_publishIntervalMs, (long)minEvaluationInterval.TotalMilliseconds);
        _instanceId = instanceId;
        _logger = logger;
    }

    public int Index { get; }

    public int Depth => _queue.Reader.Count;

    public IReadOnlyList<SiloPipeline> Pipelines => _pipelines;

    public ChannelWriter<IngestMessage> Writer => _queue.Writer;

    public void Add(SiloPipeline pipeline) => _pipelines.Add(pipeline);

    /// <summary>
    /// Delay of this worker's first checkpoint beyond the interval (set before it starts): workers fed
    /// from the first second would otherwise checkpoint in step, each second's store flush, captures and
    /// journal saves all at once.
    /// </summary>
    public TimeSpan CheckpointPhase
    {
        get;
        init => field = value >= TimeSpan.Zero ? value : throw new ArgumentOutOfRangeException(nameof(value));
    }

    private bool _checkpointed; // a checkpoint has begun: the phase is behind

    /// <summary>Messages processed and waiting for their checkpoint.</summary>
    public int Uncheckpointed => Volatile.Read(ref _uncheckpointedCount);

    private int _uncheckpointedCount;

    /// <summary>Messages taken from the queue, processed, and their silo evaluated or scheduled.</summary>
    public long MessagesProcessed => Interlocked.Read(ref _processed);

    private long _processed;

    /// <summary>
    /// While the worker waits with nothing to do: the moment its wait ends (the next evaluation or
    /// checkpoint due, unless a message comes first), on the worker's clock; null while it works.
    /// </summary>
    public DateTimeOffset? WaitingUntil => Volatile.Read(ref _waitingUntilMs) is var ms && ms == Working ? null : DateTimeOffset.FromUnixTimeMilliseconds(Math.Min(ms, MaxWaitMs));

    private const long Working = long.MinValue;
    private static readonly long MaxWaitMs = DateTimeOffset.MaxValue.ToUnixTimeMilliseconds();
    private long _waitingUntilMs = Working;

    /// <summary>Runs until the queue is completed and drained; then publishes a last estimate of every silo.</summary>
    public async Task RunAsync(CancellationToken stoppingToken)
    {
        try
        {
            await RunLoopAsync(stoppingToken).ConfigureAwait(false);
        }
        finally
        {
            // Never leave a store flush or journal save running behind the worker: the host disposes them next.
            if (_pending is { } pending)
            {
                await ((Task)pending.Done).ConfigureAwait(ConfigureAwaitOptions.SuppressThrowing);
            }
        }
    }

    private async Task RunLoopAsync(CancellationToken stoppingToken)
    {
        var reader = _queue.Reader;
        var startMs = NowMs();
        foreach (var pipeline in _pipelines)
        {
            pipeline.EvaluatedAtMs = long.MinValue / 2; // not yet: the first message's samples are evaluated at once
            _timed.Enqueue(pipeline, startMs + _publishIntervalMs);
        }

        while (!_cut)
        {
            if (stoppingToken.IsCancellationRequested)
            {
                return; // a hard stop
            }

            if (_pending is { Done.IsCompleted: true })
            {
                FinishPending();
            }

            EvaluateDue(NowMs());
            var checkpointAt = CheckpointInFlight ? DateTimeOffset.MaxValue : _nextCheckpoint; // in flight: its end wakes the wait
            if (reader.Count == 0 && _uncheckpointed.Count > 0 && !CheckpointInFlight)
            {
                var idle = _lastCheckpoint + IdleCheckpointGap;
                checkpointAt = idle < checkpointAt ? idle : checkpointAt;
                if (_time.GetUtcNow() >= checkpointAt)
                {
                    await CheckpointAsync(stoppingToken).ConfigureAwait(false);
                    continue;
                }
            }

            var wakeMs = Math.Min(NextDueMs(), checkpointAt == DateTimeOffset.MaxValue ? long.MaxValue : checkpointAt.ToUnixTimeMilliseconds());
            var wait = TimeSpan.FromMilliseconds(Math.Min(wakeMs - NowMs(), (long)TimeSpan.FromDays(1).TotalMilliseconds));
            if (wait > TimeSpan.Zero && reader.Count == 0)
            {
                using var timeout = new CancellationTokenSource(wait, _time);
                using var abort = stoppingToken.Register(static t => ((CancellationTokenSource)t!).Cancel(), timeout);
                if (_pending is { } inFlight)
                {
                    // The checkpoint in flight acknowledges its messages once stored: wake for it.
                    _ = inFlight.Done.ContinueWith(static (_, t) => CancelQuietly((CancellationTokenSource)t!), timeout,
                        CancellationToken.None, TaskContinuationOptions.ExecuteSynchronously, TaskScheduler.Default);
                }

                Volatile.Write(ref _waitingUntilMs, wakeMs);
                try
                {
                    if (!await reader.WaitToReadAsync(timeout.Token).ConfigureAwait(false))
                    {
                        break; // completed and drained
                    }
                }
                catch (OperationCanceledException) when (timeout.IsCancellationRequested)
                {
                    // An evaluation or a checkpoint is due, the one in flight is stored, or a hard stop: the normal stop completes the queue instead.
                    if (stoppingToken.IsCancellationRequested)
                    {
                        return;
                    }
                }
            }

            Volatile.Write(ref _waitingUntilMs, Working);
            while (!_cut && !stoppingToken.IsCancellationRequested && reader.TryRead(out var message))
            {
                var pipeline = message.Pipeline;
                try
                {
                    pipeline.Process(message.Buffer.AsSpan(0, message.Length), message.ReceivedMs);
                }
                catch (Exception ex)
                {
                    // Input cannot crash the service: the decoder does not throw on bad input, so this is a bug; keep going.
                    _logger.LogError(ex, "Processing a message of {Silo} failed", pipeline.Silo.Key);
                }
                finally
                {
                    message.Release();
                    pipeline.Dequeued();
                    pipeline.LastProcessedMs = NowMs();
                }

                if (message.Ticket is { } ticket)
                {
                    if (_uncheckpointed.Count == 0)
                    {
                        _nextCheckpoint = _time.GetUtcNow() + _checkpoints.Interval + (_checkpointed ? TimeSpan.Zero : CheckpointPhase);
                    }

                    _uncheckpointed.Add(ticket);
                    CountUncheckpointed();
                }

                var nowMs = NowMs();
                if (pipeline.HasUnevaluatedSamples && !pipeline.FollowsSampleTime && !pipeline.Held)
                {
                    var dueMs = pipeline.EvaluatedAtMs + _minEvaluationMs;
                    if (nowMs >= dueMs)
                    {
                        Evaluate(pipeline, nowMs);
                    }
                    else
                    {
                        pipeline.Held = true;
                        _held.Enqueue(pipeline, dueMs);
                    }
                }

                EvaluateDue(nowMs);
                Interlocked.Increment(ref _processed);
                if (CheckpointDue())
                {
                    break;
                }
            }

            if (CheckpointDue())
            {
                await CheckpointAsync(stoppingToken).ConfigureAwait(false);
            }

            if (reader.Completion.IsCompleted)
            {
                break;
            }
        }

        if (_cut)
        {
            LeaveQueued();
        }

        PublishAll();
        SaveSnapshots();
        await CheckpointAsync(stoppingToken).ConfigureAwait(false);
        await FinishPendingAsync().ConfigureAwait(false);
    }

    /// <summary>
    /// Stop cut short (the drain took too long): the worker processes no more messages, leaves those
    /// still queued unacknowledged for the broker to deliver again to the session, publishes, saves
    /// and checkpoints what it has processed, and ends. Any thread.
    /// </summary>
    public void Cut() => _cut = true;

    /// <summary>Messages left in the queue by <see cref="Cut"/>, for the broker to redeliver.</summary>
    public long LeftQueued => Interlocked.Read(ref _leftQueued);

    private volatile bool _cut;
    private long _leftQueued;

    private void LeaveQueued()
    {
        while (_queue.Reader.TryRead(out var message))
        {
            message.Release();
            message.Pipeline.Dequeued();
            if (message.Ticket is { } ticket)
            {
                _checkpoints.Acks.Abandon(ticket);
            }

            Interlocked.Increment(ref _leftQueued);
        }
    }

    private long NowMs() => _time.GetUtcNow().ToUnixTimeMilliseconds();

    /// <summary>A checkpoint is being stored and has not finished yet.</summary>
    private bool CheckpointInFlight => _pending is { Done.IsCompleted: false };

    /// <summary>
    /// Messages waiting for a checkpoint beyond which the worker waits for the one in flight rather
    /// than go on: a store that stays slow then slows the intake, and what is held stays bounded.
    /// </summary>
    private int HoldLimit => 4 * _checkpoints.MaxMessages;

    /// <summary>
    /// The next checkpoint is due (enough messages, or its interval has passed) and can begin: the one
    /// in flight, if any, has finished. While one is in flight the worker goes on processing and the
    /// due checkpoint begins as soon as that one ends, so a slow store flush or journal save delays
    /// acknowledgements, not the silos' estimates; only past <see cref="HoldLimit"/> does it wait.
    /// </summary>
    private bool CheckpointDue() =>
        (_uncheckpointed.Count >= _checkpoints.MaxMessages || _time.GetUtcNow() >= _nextCheckpoint)
        && (!CheckpointInFlight || _uncheckpointed.Count >= HoldLimit);

    /// <summary>Times the worker waited for a checkpoint in flight to finish before it could begin the next (it was at its hold limit, or stopping).</summary>
    public long CheckpointWaits => Interlocked.Read(ref _checkpointWaits);

    /// <summary>The time those waits took in all.</summary>
    public TimeSpan CheckpointWaitTime => TimeSpan.FromTicks(Interlocked.Read(ref _checkpointWaitTicks));

    private long _checkpointWaits;
    private long _checkpointWaitTicks;

    /// <summary>The earliest moment a held or a timed evaluation is due.</summary>
    private long NextDueMs()
    {
        var next = long.MaxValue;
        if (_held.TryPeek(out _, out var held))
        {
            next = held;
        }

        if (_timed.TryPeek(out _, out var timed) && timed < next)
        {
            next = timed;
        }

        return next;
    }

    /// <summary>Evaluates the held silos whose minimum interval has passed and the silos a publish interval has passed without evaluation.</summary>
    private void EvaluateDue(long nowMs)
    {
        while (_held.TryPeek(out var pipeline, out var due) && due <= nowMs)
        {
            _held.Dequeue();
            var dueMs = pipeline.EvaluatedAtMs + _minEvaluationMs;
            if (dueMs > nowMs)
            {
                _held.Enqueue(pipeline, dueMs); // evaluated on the clock meanwhile: its minimum interval starts again
                continue;
            }

            pipeline.Held = false;
            if (pipeline.HasUnevaluatedSamples)
            {
                Evaluate(pipeline, nowMs);
            }
        }

        while (_timed.TryPeek(out var pipeline, out var due) && due <= nowMs)
        {
            _timed.Dequeue();
            pipeline.CloseIdleIntervals(nowMs);
            var dueMs = pipeline.EvaluatedAtMs + _publishIntervalMs;
            if (dueMs <= nowMs)
            {
                Evaluate(pipeline, nowMs);
                dueMs = nowMs + _publishIntervalMs;
            }

            _timed.Enqueue(pipeline, dueMs);
        }
    }

    private void Evaluate(SiloPipeline pipeline, long nowMs)
    {
        pipeline.EvaluatedAtMs = nowMs;
        try
        {
            pipeline.Publish(nowMs, _instanceId);
        }
        catch (Exception ex)
        {
            _logger.LogError(ex, "Evaluating the estimate of {Silo} failed", pipeline.Silo.Key);
        }
    }

    /// <summary>
    /// Begins a checkpoint of what was processed, once the one in flight (if any) is finished: the
    /// worker waits for one only at its hold limit (<see cref="CheckpointDue"/>) and when it stops.
    /// </summary>
    private async Task CheckpointAsync(CancellationToken stoppingToken)
    {
        if (stoppingToken.IsCancellationRequested)
        {
            return; // a hard stop: what is not checkpointed stays with the broker
        }

        await FinishPendingAsync().ConfigureAwait(false);
        if (stoppingToken.IsCancellationRequested)
        {
            return;
        }

        _checkpointed = true;
        _pending = _checkpoints.Begin(_pipelines, _uncheckpointed, _time.GetUtcNow().ToUnixTimeMilliseconds(), stoppingToken);
        _nextCheckpoint = DateTimeOffset.MaxValue;
        _lastCheckpoint = _time.GetUtcNow();
        CountUncheckpointed();
    }

    private async Task FinishPendingAsync()
    {
        if (_pending is { } pending)
        {
            if (!pending.Done.IsCompleted)
            {
                var started = System.Diagnostics.Stopwatch.GetTimestamp();
                await ((Task)pending.Done).ConfigureAwait(ConfigureAwaitOptions.SuppressThrowing);
                Interlocked.Increment(ref _checkpointWaits);
                Interlocked.Add(ref _checkpointWaitTicks, System.Diagnostics.Stopwatch.GetElapsedTime(started).Ticks);
            }

            FinishPending();
        }
    }

    /// <summary>The checkpoint in flight is done: its messages acknowledged, or (failed) kept for the next one.</summary>
    private void FinishPending()
    {
        var pending = _pending!;
        _pending = null;
        if (!_checkpoints.Finish(pending))
        {
            _uncheckpointed.InsertRange(0, pending.Tickets);
            if (pending.Done.Exception?.GetBaseException() is { } ex and not OperationCanceledException)
            {
                // The messages stay unacknowledged (the broker keeps them) and the next checkpoint tries again.
                _logger.LogError(ex, "Checkpoint of partition {Partition} failed; {Messages} message(s) stay unacknowledged", Index, _uncheckpointed.Count);
            }

            _nextCheckpoint = _time.GetUtcNow() + _checkpoints.Interval;
            _lastCheckpoint = _time.GetUtcNow();
        }

        CountUncheckpointed();
    }

    private void CountUncheckpointed() =>
        Volatile.Write(ref _uncheckpointedCount, _uncheckpointed.Count + (_pending?.Tickets.Count ?? 0));

    private static void CancelQuietly(CancellationTokenSource source)
    {
        try
        {
            source.Cancel();
        }
        catch (ObjectDisposedException)
        {
            // the wait ended before the checkpoint did
        }
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
        var now = NowMs();
        foreach (var pipeline in _pipelines)
        {
            Evaluate(pipeline, now);
        }
    }
}
