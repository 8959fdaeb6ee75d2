using System.Collections.Concurrent;
using System.Threading.Channels;

namespace SiloWatch.Storage;

/// <summary>Points in arrival order, stored column-wise so a batch is reused without allocating.</summary>
internal sealed class PointBatch
{
    private double[] _values;

    public PointBatch(int capacity)
    {
        Series = new SeriesKey[capacity];
        Timestamps = new long[capacity];
        ValueStart = new int[capacity + 1];
        _values = new double[capacity * 4];
    }

    public SeriesKey[] Series { get; }

    public long[] Timestamps { get; }

    private int[] ValueStart { get; }

    public int Count { get; private set; }

    public int Capacity => Series.Length;

    public bool IsFull => Count == Series.Length;

    public void Add(SeriesKey series, long timestampMs, ReadOnlySpan<double> values)
    {
        var start = ValueStart[Count];
        if (start + values.Length > _values.Length)
        {
            Array.Resize(ref _values, Math.Max(_values.Length * 2, start + values.Length));
        }

        values.CopyTo(_values.AsSpan(start));
        Series[Count] = series;
        Timestamps[Count] = timestampMs;
        Count++;
        ValueStart[Count] = start + values.Length;
    }

    public ReadOnlySpan<double> ValuesOf(int i) => _values.AsSpan(ValueStart[i], ValueStart[i + 1] - ValueStart[i]);

    public void Reset()
    {
        Array.Clear(Series, 0, Count);
        Count = 0;
        ValueStart[0] = 0;
    }

    /// <summary>Formats the batch as line protocol, lines joined by '\n' (no trailing newline).</summary>
    /// <returns>The number of lines; points with no finite value are counted in <paramref name="skipped"/>.</returns>
    public int Format(TextBuffer buffer, out int skipped)
    {
        buffer.Clear();
        var lines = 0;
        skipped = 0;
        for (var i = 0; i < Count; i++)
        {
            var mark = buffer.Length;
            if (lines > 0)
            {
                buffer.Append('\n');
            }

            if (LineProtocol.AppendLine(buffer, Series[i], Timestamps[i], ValuesOf(i)))
            {
                lines++;
            }
            else
            {
                buffer.Length = mark;
                skipped++;
            }
        }

        return lines;
    }
}

/// <summary>Completed by the background writer once every batch queued before it is stored or spooled.</summary>
internal sealed class FlushMarker
{
    private readonly TaskCompletionSource _done = new(TaskCreationOptions.RunContinuationsAsynchronously);

    public Task Task => _done.Task;

    public void Complete() => _done.TrySetResult();

    public void Fail(Exception ex) => _done.TrySetException(ex);
}

/// <summary>
/// The bounded hand-over between the threads calling Write and the one background writer. Callers
/// take a short lock (no I/O) to copy a point into the current batch; a full batch, or any partial
/// batch when the flush timer fires, is queued for the writer. When the queued points would exceed
/// the capacity, the calling thread hands that batch to the overflow action instead (a local disk
/// write), so points are never dropped.
/// </summary>
internal sealed class PointBuffer : IDisposable
{
    private readonly Lock _lock = new();
    private readonly Channel<object> _queue = Channel.CreateUnbounded<object>(new UnboundedChannelOptions { SingleReader = true });
    private readonly ConcurrentQueue<PointBatch> _pool = new();
    private readonly int _batchSize;
    private readonly int _capacityPoints;
    private readonly Action<PointBatch> _overflow;
    private readonly ITimer _timer;
    private PointBatch _current;
    private long _queuedPoints;
    private long _overflowPoints;
    private bool _completed;

    public PointBuffer(int batchSize, int capacityPoints, TimeSpan flushInterval, TimeProvider timeProvider, Action<PointBatch> overflow)
    {
        _batchSize = batchSize;
        _capacityPoints = capacityPoints;
        _overflow = overflow;
        _current = new PointBatch(batchSize);
        _timer = timeProvider.CreateTimer(static s => ((PointBuffer)s!).SealPartial(), this, flushInterval, flushInterval);
    }

    public ChannelReader<object> Reader => _queue.Reader;

    public long BufferedPoints
    {
        get
        {
            lock (_lock)
            {
                return Interlocked.Read(ref _queuedPoints) + _current.Count;
            }
        }
    }

    public long CapacityPoints => _capacityPoints;

    public long OverflowPoints => Interlocked.Read(ref _overflowPoints);

    public void Add(SeriesKey series, long timestampMs, ReadOnlySpan<double> values)
    {
        PointBatch? spill = null;
        lock (_lock)
        {
            ObjectDisposedException.ThrowIf(_completed, this);
            _current.Add(series, timestampMs, values);
            if (_current.IsFull)
            {
                spill = SealLocked();
            }
        }

        if (spill is not null)
        {
            Spill(spill);
        }
    }

    /// <summary>Queues the partial batch and a marker the writer completes once it gets there.</summary>
    public Task FlushAsync(CancellationToken ct)
    {
        var marker = new FlushMarker();
        PointBatch? spill = null;
        lock (_lock)
        {
            if (_completed)
            {
                return Task.CompletedTask;
            }

            if (_current.Count > 0)
            {
                spill = SealLocked();
            }

            _queue.Writer.TryWrite(marker);
        }

        if (spill is not null)
        {
            Spill(spill);
        }

        return marker.Task.WaitAsync(ct);
    }

    /// <summary>Called by the writer when it is done with a batch.</summary>
    public void Release(PointBatch batch)
    {
        Interlocked.Add(ref _queuedPoints, -batch.Count);
        Return(batch);
    }

    /// <summary>Queues what is left and ends the queue: the writer drains it and stops.</summary>
    public void Complete()
    {
        _timer.Dispose();
        PointBatch? spill = null;
        lock (_lock)
        {
            if (_completed)
            {
                return;
            }

            if (_current.Count > 0)
            {
                spill = SealLocked();
            }

            _completed = true;
            _queue.Writer.TryComplete();
        }

        if (spill is not null)
        {
            Spill(spill);
        }
    }

    public void Dispose() => Complete();

    private void SealPartial()
    {
        PointBatch? spill = null;
        lock (_lock)
        {
            if (_completed || _current.Count == 0)
            {
                return;
            }

            spill = SealLocked();
        }

        if (spill is not null)
        {
            Spill(spill);
        }
    }

    /// <returns>The batch when it must overflow to disk, else null (it was queued).</returns>
    private PointBatch? SealLocked()
    {
        var batch = _current;
        _current = Rent();
        if (Interlocked.Read(ref _queuedPoints) + batch.Count > _capacityPoints)
        {
            return batch;
        }

        Interlocked.Add(ref _queuedPoints, batch.Count);
        _queue.Writer.TryWrite(batch);
        return null;
    }

    private void Spill(PointBatch batch)
    {
        try
        {
            _overflow(batch);
            Interlocked.Add(ref _overflowPoints, batch.Count);
        }
        finally
        {
            Return(batch);
        }
    }

    private PointBatch Rent() => _pool.TryDequeue(out var batch) ? batch : new PointBatch(_batchSize);

    private void Return(PointBatch batch)
    {
        batch.Reset();
        if (_pool.Count < 16)
        {
            _pool.Enqueue(batch);
        }
    }
}
