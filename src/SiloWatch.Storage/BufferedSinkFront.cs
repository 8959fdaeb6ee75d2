using System.Threading.Channels;

namespace SiloWatch.Storage;

/// <summary>
/// The part both time-series sinks (InfluxDB API and embedded SQLite) share: <see cref="Write"/> checks a
/// point and copies it into the bounded <see cref="PointBuffer"/>; the sink's one background writer takes
/// batches and flush markers from <see cref="Reader"/> through <see cref="HandleAsync"/>; and the counters
/// every store reports (written, skipped, last stored, last error) with the buffer's own figures in
/// <see cref="Health"/>. What a sink does with a batch, and with one that overflows the buffer, is its own.
/// </summary>
internal sealed class BufferedSinkFront : IDisposable
{
    private readonly PointBuffer _buffer;
    private readonly TimeProvider _timeProvider;
    private long _written;
    private long _skipped;
    private long _lastStoredUnixMs = -1;
    private volatile string? _lastError;

    /// <param name="overflow">Called on the thread of a Write that finds the buffer full, with the batch that did not fit.</param>
    public BufferedSinkFront(TimeSeriesOptions options, TimeProvider timeProvider, Action<PointBatch> overflow)
    {
        _timeProvider = timeProvider;
        _buffer = new PointBuffer(options.BatchSize, options.BufferCapacityPoints, options.FlushInterval, timeProvider, overflow);
    }

    /// <summary>Batches (<see cref="PointBatch"/>) and flush markers, in the order written, for the one writer.</summary>
    public ChannelReader<object> Reader => _buffer.Reader;

    /// <summary>The last error, without secrets; null once the store works again.</summary>
    public string? LastError
    {
        get => _lastError;
        set => _lastError = value;
    }

    /// <summary>See <see cref="ITimeSeriesSink.Write"/>.</summary>
    public void Write(SeriesKey series, long timestampMs, ReadOnlySpan<double> values)
    {
        ArgumentNullException.ThrowIfNull(series);
        if (values.Length != series.FieldNames.Count)
        {
            throw new ArgumentException($"{series.Measurement} takes {series.FieldNames.Count} values, got {values.Length}", nameof(values));
        }

        _buffer.Add(series, timestampMs, values);
    }

    /// <summary>See <see cref="ITimeSeriesSink.FlushAsync"/>.</summary>
    public Task FlushAsync(CancellationToken ct) => _buffer.FlushAsync(ct);

    /// <summary>
    /// One item of <see cref="Reader"/>: a flush marker is completed (everything before it is handled);
    /// a batch goes to <paramref name="write"/> and back to the buffer's pool afterwards, whatever happens.
    /// </summary>
    public async Task HandleAsync(object item, Func<PointBatch, Task> write)
    {
        if (item is FlushMarker marker)
        {
            marker.Complete();
            return;
        }

        var batch = (PointBatch)item;
        try
        {
            await write(batch).ConfigureAwait(false);
        }
        finally
        {
            _buffer.Release(batch);
        }
    }

    /// <summary>Counts points the store acknowledged and notes the time.</summary>
    public void Stored(long points)
    {
        Interlocked.Add(ref _written, points);
        Interlocked.Exchange(ref _lastStoredUnixMs, _timeProvider.GetUtcNow().ToUnixTimeMilliseconds());
    }

    /// <summary>Counts points with no finite value, which no store can carry.</summary>
    public void Skipped(long points) => Interlocked.Add(ref _skipped, points);

    /// <summary>Queues what is left and ends the queue: the writer drains it and stops.</summary>
    public void Complete() => _buffer.Complete();

    public void Dispose() => _buffer.Dispose();

    /// <summary>The figures of the front; the sink adds its own with <c>with { ... }</c>.</summary>
    public StorageHealth Health(string backend, bool reachable) => new()
    {
        Backend = backend,
        StoreReachable = reachable,
        BufferedPoints = _buffer.BufferedPoints,
        BufferCapacityPoints = _buffer.CapacityPoints,
        WrittenPoints = Interlocked.Read(ref _written),
        OverflowPoints = _buffer.OverflowPoints,
        SkippedNonFinitePoints = Interlocked.Read(ref _skipped),
        LastStoredUtc = Interlocked.Read(ref _lastStoredUnixMs) is var ms and >= 0 ? DateTimeOffset.FromUnixTimeMilliseconds(ms) : null,
        LastError = _lastError,
    };
}
