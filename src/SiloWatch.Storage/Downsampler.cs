using System.Collections.Concurrent;
using Microsoft.Extensions.Logging;

namespace SiloWatch.Storage;

/// <summary>
/// Reduces points to one per interval and series before they reach the store, by measurement:
/// each field takes its aggregate (mean, min, max or last of its finite values), fields named in
/// MinMaxFields also get "{field}_min" and "{field}_max". Intervals are aligned to the Unix epoch
/// and stamped with their start, so a restart or a replay produces the same series and timestamps.
/// <para>
/// An interval is emitted when the series' first point of a later interval arrives, on
/// <see cref="FlushAsync"/>, or once the series is idle, so that a sensor that stops still gets
/// its last interval written. Who decides it is idle: by default a timer, once the series has been
/// silent for two intervals of wall time (checked each shortest interval, so after two to three
/// intervals). A writer that knows better, because it holds the queue the points come from (the
/// service's worker of a silo), takes that over with <see cref="IIdleIntervalClose"/>: a writer
/// stalled for seconds with points still queued (CPU starvation) would otherwise see its interval
/// written early with part of its points and then again. A point arriving for an interval emitted
/// as idle is merged and the interval is written again with the same timestamp (the store keeps
/// one of the two). A point older than the interval being filled is counted in
/// <see cref="StorageHealth.LatePoints"/>, logged, and not written.
/// </para>
/// Measurements without a rule (or with Interval 0) pass through unchanged.
/// </summary>
public sealed partial class Downsampler : ITimeSeriesSink, IIntervalCheckpoint, IIdleIntervalClose
{
    // Marks a series looked up and found to have no rule (it passes through).
    private static readonly object PassThrough = new();

    private readonly ITimeSeriesSink _inner;
    private readonly Dictionary<string, DownsamplingOptions> _rules;
    private readonly ILogger _logger;
    private readonly ConcurrentDictionary<SeriesKey, SeriesState?> _states = new();
    private readonly Lock _grow = new();
    private readonly ITimer? _idleTimer;
    private readonly TimeSpan _tickPeriod;
    private volatile object?[] _byId = new object?[256]; // SeriesState or PassThrough by SeriesKey.Id: no hashing per point
    private long _tick; // idle-timer ticks: a point records it instead of reading the clock
    private long _late;
    private int _disposed;

    public Downsampler(ITimeSeriesSink inner, IReadOnlyDictionary<string, DownsamplingOptions> rules, TimeProvider timeProvider, ILogger<Downsampler> logger)
    {
        ArgumentNullException.ThrowIfNull(inner);
        ArgumentNullException.ThrowIfNull(rules);
        ArgumentNullException.ThrowIfNull(timeProvider);
        ArgumentNullException.ThrowIfNull(logger);
        _inner = inner;
        _rules = rules.Where(r => r.Value.Interval > TimeSpan.Zero).ToDictionary(r => r.Key, r => r.Value, StringComparer.Ordinal);
        _logger = logger;
        if (_rules.Count > 0)
        {
            _tickPeriod = _rules.Values.Min(r => r.Interval);
            _idleTimer = timeProvider.CreateTimer(static s => ((Downsampler)s!).CloseIdle(), this, _tickPeriod, _tickPeriod);
        }
    }

    public StorageHealth Health
    {
        get
        {
            var inner = _inner.Health;
            return inner with { LatePoints = inner.LatePoints + Interlocked.Read(ref _late) };
        }
    }

    public void Write(SeriesKey series, long timestampMs, ReadOnlySpan<double> values)
    {
        ArgumentNullException.ThrowIfNull(series);
        var state = StateOf(series);
        if (state is null)
        {
            _inner.Write(series, timestampMs, values);
            return;
        }

        if (values.Length != series.FieldNames.Count)
        {
            throw new ArgumentException($"{series.Measurement} takes {series.FieldNames.Count} values, got {values.Length}", nameof(values));
        }

        if (!state.Add(timestampMs, values, Volatile.Read(ref _tick), _inner))
        {
            var late = Interlocked.Increment(ref _late);
            if (long.IsPow2(late))
            {
                // 1st, 2nd, 4th, 8th ... late point: visible without flooding the log.
                LogLate(_logger, series.ToString(), timestampMs, late);
            }
        }
    }

    /// <summary>Emits every partly filled interval, then flushes the store behind.</summary>
    public async Task FlushAsync(CancellationToken ct)
    {
        EmitAll();
        await _inner.FlushAsync(ct).ConfigureAwait(false);
    }

    /// <summary>Flushes what was emitted to the store behind; open intervals stay open.</summary>
    public Task FlushStoredAsync(CancellationToken ct) => _inner.FlushAsync(ct);

    public OpenInterval? CaptureInterval(SeriesKey series)
    {
        ArgumentNullException.ThrowIfNull(series);
        return StateOf(series)?.Capture();
    }

    public void RestoreInterval(SeriesKey series, OpenInterval interval)
    {
        ArgumentNullException.ThrowIfNull(series);
        ArgumentNullException.ThrowIfNull(interval);
        StateOf(series)?.Restore(interval, Volatile.Read(ref _tick));
    }

    public void CloseIdleByCaller(SeriesKey series)
    {
        ArgumentNullException.ThrowIfNull(series);
        if (StateOf(series) is { } state)
        {
            state.CallerClosesIdle = true;
        }
    }

    public bool CloseIfIdle(SeriesKey series, TimeSpan silentFor)
    {
        ArgumentNullException.ThrowIfNull(series);
        return StateOf(series) is { } state && silentFor >= 2 * state.Interval && state.EmitIfDirty(_inner);
    }

    private SeriesState? StateOf(SeriesKey series)
    {
        var byId = _byId;
        var id = series.Id;
        if ((uint)id < (uint)byId.Length && byId[id] is { } known)
        {
            return known as SeriesState;
        }

        var state = _states.GetOrAdd(series, CreateState);
        lock (_grow)
        {
            byId = _byId;
            if (id >= byId.Length)
            {
                Array.Resize(ref byId, Math.Max(byId.Length * 2, id + 1));
            }

            byId[id] = (object?)state ?? PassThrough;
            _byId = byId;
        }

        return state;
    }

    public async ValueTask DisposeAsync()
    {
        if (Interlocked.Exchange(ref _disposed, 1) == 1)
        {
            return;
        }

        if (_idleTimer is not null)
        {
            await _idleTimer.DisposeAsync().ConfigureAwait(false);
        }

        EmitAll();
        await _inner.DisposeAsync().ConfigureAwait(false);
    }

    private void EmitAll()
    {
        foreach (var state in _states.Values)
        {
            state?.EmitIfDirty(_inner);
        }
    }

    private void CloseIdle()
    {
        var now = Interlocked.Increment(ref _tick);
        foreach (var state in _states.Values)
        {
            if (state is not null && !state.CallerClosesIdle && now - state.LastArrival >= state.IdleTicks)
            {
                state.EmitIfDirty(_inner);
            }
        }
    }

    // Silent for two intervals: a point arrives up to one tick after the tick it records, so one tick more.
    private SeriesState? CreateState(SeriesKey series) =>
        _rules.TryGetValue(series.Measurement, out var rule)
            ? new SeriesState(series, rule, 1 + (long)Math.Ceiling(2 * rule.Interval.TotalMilliseconds / Math.Max(1, _tickPeriod.TotalMilliseconds)))
            : null;

    [LoggerMessage(Level = LogLevel.Warning, Message = "Downsampling: point of {Series} at {TimestampMs} is older than the interval being filled and is not written ({LateCount} so far)")]
    private static partial void LogLate(ILogger logger, string series, long timestampMs, long lateCount);

    /// <summary>The interval being filled for one series. Guarded by its own lock: one series normally comes from one thread.</summary>
    private sealed class SeriesState
    {
        private readonly Lock _lock = new();
        private readonly SeriesKey _output;
        private readonly long _intervalMs;
        private readonly DownsampleAggregate[] _aggregates;
        private readonly int[] _minMaxInputs;
        private readonly double[] _sum;
        private readonly int[] _count;
        private readonly double[] _min;
        private readonly double[] _max;
        private readonly double[] _last;
        private long _bucket = long.MinValue;
        private bool _dirty;

        public SeriesState(SeriesKey input, DownsamplingOptions rule, long idleTicks)
        {
            _intervalMs = Math.Max(1, (long)rule.Interval.TotalMilliseconds);
            IdleTicks = idleTicks;
            var n = input.FieldNames.Count;
            _aggregates = [.. input.FieldNames.Select(f => rule.FieldAggregates.TryGetValue(f, out var a) ? a : rule.Aggregate)];
            _minMaxInputs = [.. rule.MinMaxFields.Select(f => input.FieldNames.ToList().IndexOf(f)).Where(i => i >= 0).Distinct()];
            var outputFields = input.FieldNames.Concat(_minMaxInputs.SelectMany(i => new[] { input.FieldNames[i] + "_min", input.FieldNames[i] + "_max" }));
            _output = new SeriesKey(input.Measurement, input.Tags, outputFields);
            _sum = new double[n];
            _count = new int[n];
            _min = new double[n];
            _max = new double[n];
            _last = new double[n];
            Reset(long.MinValue);
        }

        /// <summary>Idle-timer ticks of silence after which a partly filled interval is written.</summary>
        public long IdleTicks { get; }

        public TimeSpan Interval => TimeSpan.FromMilliseconds(_intervalMs);

        /// <summary>The writer closes the idle interval (<see cref="IIdleIntervalClose"/>), not the timer.</summary>
        public bool CallerClosesIdle
        {
            get => Volatile.Read(ref _callerClosesIdle);
            set => Volatile.Write(ref _callerClosesIdle, value);
        }

        private bool _callerClosesIdle;

        /// <summary>The idle-timer tick of the last point.</summary>
        public long LastArrival { get; private set; }

        public OpenInterval? Capture()
        {
            lock (_lock)
            {
                return _bucket == long.MinValue ? null : new OpenInterval(_bucket, _dirty, [.. _sum], [.. _count], [.. _min], [.. _max], [.. _last]);
            }
        }

        public void Restore(OpenInterval interval, long tick)
        {
            var n = _sum.Length;
            if (interval.Sum.Length != n || interval.Count.Length != n || interval.Min.Length != n || interval.Max.Length != n || interval.Last.Length != n)
            {
                throw new ArgumentException($"the saved interval has fields for {interval.Sum.Length} values, the series {n}", nameof(interval));
            }

            lock (_lock)
            {
                _bucket = interval.Bucket;
                _dirty = interval.Dirty;
                interval.Sum.CopyTo(_sum, 0);
                interval.Count.CopyTo(_count, 0);
                interval.Min.CopyTo(_min, 0);
                interval.Max.CopyTo(_max, 0);
                interval.Last.CopyTo(_last, 0);
                LastArrival = tick;
            }
        }

        /// <returns>False when the point is older than the interval being filled.</returns>
        public bool Add(long timestampMs, ReadOnlySpan<double> values, long arrival, ITimeSeriesSink sink)
        {
            var bucket = Math.DivRem(timestampMs, _intervalMs, out var rem) - (rem < 0 ? 1 : 0);
            lock (_lock)
            {
                if (bucket < _bucket)
                {
                    return false;
                }

                if (bucket > _bucket)
                {
                    EmitLocked(sink);
                    Reset(bucket);
                }

                for (var i = 0; i < values.Length; i++)
                {
                    var v = values[i];
                    if (!double.IsFinite(v))
                    {
                        continue;
                    }

                    _sum[i] += v;
                    _count[i]++;
                    _min[i] = Math.Min(_min[i], v);
                    _max[i] = Math.Max(_max[i], v);
                    _last[i] = v;
                }

                _dirty = true;
                LastArrival = arrival;
                return true;
            }
        }

        /// <returns>True when the interval held points not yet written (and has now been written).</returns>
        public bool EmitIfDirty(ITimeSeriesSink sink)
        {
            lock (_lock)
            {
                return EmitLocked(sink);
            }
        }

        private bool EmitLocked(ITimeSeriesSink sink)
        {
            if (!_dirty)
            {
                return false;
            }

            Span<double> output = stackalloc double[_output.FieldNames.Count];
            for (var i = 0; i < _aggregates.Length; i++)
            {
                output[i] = _count[i] == 0 ? double.NaN : _aggregates[i] switch
                {
                    DownsampleAggregate.Mean => _sum[i] / _count[i],
                    DownsampleAggregate.Min => _min[i],
                    DownsampleAggregate.Max => _max[i],
                    _ => _last[i],
                };
            }

            var k = _aggregates.Length;
            foreach (var i in _minMaxInputs)
            {
                output[k++] = _count[i] == 0 ? double.NaN : _min[i];
                output[k++] = _count[i] == 0 ? double.NaN : _max[i];
            }

            sink.Write(_output, _bucket * _intervalMs, output);
            _dirty = false;
            return true;
        }

        private void Reset(long bucket)
        {
            _bucket = bucket;
            Array.Clear(_sum);
            Array.Clear(_count);
            Array.Fill(_min, double.PositiveInfinity);
            Array.Fill(_max, double.NegativeInfinity);
            Array.Fill(_last, double.NaN);
            _dirty = false;
        }
    }
}

/// <summary>
/// A sink whose idle intervals the writer may close itself (the <see cref="Downsampler"/>): a writer
/// that knows when its source is idle (nothing queued, silent for a while on its own clock) is a
/// better judge than wall-clock silence, which a stalled writer with a full queue also shows.
/// </summary>
public interface IIdleIntervalClose
{
    /// <summary>From now on the writer closes the idle intervals of <paramref name="series"/>; the wall-clock timer leaves them alone.</summary>
    void CloseIdleByCaller(SeriesKey series);

    /// <summary>
    /// Tells that the source of <paramref name="series"/> has nothing queued and has been silent for
    /// <paramref name="silentFor"/>: when that is at least two intervals of the series, its open
    /// interval is written if it holds points not yet written.
    /// </summary>
    /// <returns>True when an interval was written.</returns>
    bool CloseIfIdle(SeriesKey series, TimeSpan silentFor);
}
