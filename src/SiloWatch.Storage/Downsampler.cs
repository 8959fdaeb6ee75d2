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
/// as idle is merged and the interval is written again with the same timestamp.
/// </para>
/// <para>
/// Late points: a gateway that stores and forwards, or a network that reorders, delivers points of
/// intervals already written. Each series keeps the accumulators of the intervals within its rule's
/// <see cref="DownsamplingOptions.LateMergeWindow"/> behind the interval being filled; a late point of
/// one of them is merged in and that interval is written again at once with the same timestamp (the
/// embedded store and InfluxDB keep the newer write; VictoriaMetrics does not reliably, see README.md).
/// A point older than the window is counted in <see cref="StorageHealth.LatePoints"/>, logged, and
/// not written. So is a point older than the first interval held since start or since a checkpoint
/// was restored: what the store holds for earlier intervals is not known here, and writing such an
/// interval with the late point alone would replace its complete value with a partial one.
/// </para>
/// <para>
/// Checkpoints (<see cref="IIntervalCheckpoint"/>) hold the open interval only: a late merge is
/// written at once, so every other interval in the window is already with the store when a checkpoint
/// flushes it. After a restart the window begins at the restored interval.
/// </para>
/// <para>
/// "Last" is the value with the newest timestamp in the interval (the later arrival on a tie), not the
/// last to arrive. NaN and infinite values are left out of every aggregate.
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
    private readonly ConcurrentDictionary<string, IntervalLayout> _layouts = new(StringComparer.Ordinal);
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
                LogLate(_logger, series.ToString(), timestampMs, state.LateMergeWindow, late);
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

    /// <summary>Intervals behind the one being filled whose late points are still merged: the window rounded up to whole intervals.</summary>
    internal static long LateIntervals(DownsamplingOptions rule)
    {
        var intervalMs = Math.Max(1, (long)rule.Interval.TotalMilliseconds);
        var windowMs = Math.Max(0, (long)rule.LateMergeWindow.TotalMilliseconds);
        return (windowMs + intervalMs - 1) / intervalMs;
    }

    // Silent for two intervals: a point arrives up to one tick after the tick it records, so one tick more.
    private SeriesState? CreateState(SeriesKey series)
    {
        if (!_rules.TryGetValue(series.Measurement, out var rule))
        {
            return null;
        }

        var layout = _layouts.GetOrAdd(series.Measurement + "\n" + string.Join('\n', series.FieldNames), _ => new IntervalLayout(series.FieldNames, rule));
        return new SeriesState(series, layout, rule, 1 + (long)Math.Ceiling(2 * rule.Interval.TotalMilliseconds / Math.Max(1, _tickPeriod.TotalMilliseconds)));
    }

    [LoggerMessage(Level = LogLevel.Warning, Message = "Downsampling: point of {Series} at {TimestampMs} is more than the late-merge window ({LateMergeWindow}) behind the interval being filled, or older than the first interval held since start, and is not written ({LateCount} so far)")]
    private static partial void LogLate(ILogger logger, string series, long timestampMs, TimeSpan lateMergeWindow, long lateCount);

    /// <summary>
    /// Where each field's accumulators sit in one interval's run of doubles: only those its aggregate
    /// needs (a count always; sum for Mean; min and max for Min, Max and the MinMaxFields; the value
    /// and its timestamp for Last). Shared by every series of one measurement and field list.
    /// </summary>
    private sealed class IntervalLayout
    {
        public IntervalLayout(IReadOnlyList<string> fieldNames, DownsamplingOptions rule)
        {
            var n = fieldNames.Count;
            Aggregates = [.. fieldNames.Select(f => rule.FieldAggregates.TryGetValue(f, out var a) ? a : rule.Aggregate)];
            MinMaxInputs = [.. rule.MinMaxFields.Select(f => fieldNames.ToList().IndexOf(f)).Where(i => i >= 0).Distinct()];
            CountAt = new int[n];
            SumAt = new int[n];
            MinAt = new int[n];
            MaxAt = new int[n];
            LastAt = new int[n];
            var empty = new List<double>();
            int Take(double initial)
            {
                empty.Add(initial);
                return empty.Count - 1;
            }

            for (var i = 0; i < n; i++)
            {
                var a = Aggregates[i];
                var minMax = MinMaxInputs.Contains(i);
                CountAt[i] = Take(0);
                SumAt[i] = a == DownsampleAggregate.Mean ? Take(0) : -1;
                MinAt[i] = a == DownsampleAggregate.Min || minMax ? Take(double.PositiveInfinity) : -1;
                MaxAt[i] = a == DownsampleAggregate.Max || minMax ? Take(double.NegativeInfinity) : -1;
                LastAt[i] = a == DownsampleAggregate.Last ? Take(double.NaN) : -1;
                if (LastAt[i] >= 0)
                {
                    Take(double.NegativeInfinity); // the value's timestamp, at LastAt + 1
                }
            }

            Empty = [.. empty];
            HasLast = LastAt.Any(i => i >= 0);
        }

        public DownsampleAggregate[] Aggregates { get; }

        public int[] MinMaxInputs { get; }

        public int[] CountAt { get; }

        public int[] SumAt { get; }

        public int[] MinAt { get; }

        public int[] MaxAt { get; }

        public int[] LastAt { get; }

        public bool HasLast { get; }

        /// <summary>The accumulators of an interval with no point, copied over a slot to start it.</summary>
        public double[] Empty { get; }

        public int Stride => Empty.Length;
    }

    /// <summary>
    /// The interval being filled for one series and the intervals before it within the late-merge
    /// window: a ring of slots in one array allocated once (slot = interval index modulo the slot
    /// count), each slot knowing which interval it holds. Guarded by its own lock: one series
    /// normally comes from one thread.
    /// </summary>
    private sealed class SeriesState
    {
        private readonly Lock _lock = new();
        private readonly SeriesKey _output;
        private readonly IntervalLayout _layout;
        private readonly long _intervalMs;
        private readonly long _behind; // intervals behind the open one that still take points
        private readonly double[] _acc; // slot s at s * stride
        private readonly long[] _bucketOf; // the interval each slot holds, long.MinValue for none
        private long _open = long.MinValue; // the interval being filled
        private long _floor = long.MinValue; // the first interval held since start or restore: none older is reopened
        private bool _dirty; // the open interval holds points not yet written

        public SeriesState(SeriesKey input, IntervalLayout layout, DownsamplingOptions rule, long idleTicks)
        {
            _layout = layout;
            _intervalMs = Math.Max(1, (long)rule.Interval.TotalMilliseconds);
            _behind = LateIntervals(rule);
            LateMergeWindow = rule.LateMergeWindow;
            IdleTicks = idleTicks;
            var outputFields = input.FieldNames.Concat(layout.MinMaxInputs.SelectMany(i => new[] { input.FieldNames[i] + "_min", input.FieldNames[i] + "_max" }));
            _output = new SeriesKey(input.Measurement, input.Tags, outputFields);
            _acc = new double[(_behind + 1) * layout.Stride];
            _bucketOf = new long[_behind + 1];
            Array.Fill(_bucketOf, long.MinValue);
        }

        /// <summary>Idle-timer ticks of silence after which a partly filled interval is written.</summary>
        public long IdleTicks { get; }

        public TimeSpan Interval => TimeSpan.FromMilliseconds(_intervalMs);

        public TimeSpan LateMergeWindow { get; }

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
                if (_open == long.MinValue)
                {
                    return null;
                }

                var n = _layout.CountAt.Length;
                var at = SlotOf(_open) * _layout.Stride;
                double[] sum = new double[n], min = new double[n], max = new double[n], last = new double[n];
                var count = new int[n];
                var lastMs = _layout.HasLast ? new long[n] : null;
                for (var i = 0; i < n; i++)
                {
                    count[i] = (int)_acc[at + _layout.CountAt[i]];
                    sum[i] = _layout.SumAt[i] < 0 ? 0 : _acc[at + _layout.SumAt[i]];
                    min[i] = _layout.MinAt[i] < 0 ? double.PositiveInfinity : _acc[at + _layout.MinAt[i]];
                    max[i] = _layout.MaxAt[i] < 0 ? double.NegativeInfinity : _acc[at + _layout.MaxAt[i]];
                    last[i] = _layout.LastAt[i] < 0 ? double.NaN : _acc[at + _layout.LastAt[i]];
                    if (lastMs is not null)
                    {
                        var ts = _layout.LastAt[i] < 0 ? double.NegativeInfinity : _acc[at + _layout.LastAt[i] + 1];
                        lastMs[i] = double.IsFinite(ts) ? (long)ts : long.MinValue;
                    }
                }

                return new OpenInterval(_open, _dirty, sum, count, min, max, last, lastMs);
            }
        }

        public void Restore(OpenInterval interval, long tick)
        {
            var n = _layout.CountAt.Length;
            if (interval.Sum.Length != n || interval.Count.Length != n || interval.Min.Length != n || interval.Max.Length != n || interval.Last.Length != n
                || (interval.LastTimestampMs is { } saved && saved.Length != n))
            {
                throw new ArgumentException($"the saved interval has fields for {interval.Sum.Length} values, the series {n}", nameof(interval));
            }

            lock (_lock)
            {
                Array.Fill(_bucketOf, long.MinValue);
                _open = interval.Bucket;
                _floor = interval.Bucket; // what the store holds for earlier intervals is not known here
                _dirty = interval.Dirty;
                var at = Start(_open);
                for (var i = 0; i < n; i++)
                {
                    _acc[at + _layout.CountAt[i]] = interval.Count[i];
                    Set(at, _layout.SumAt[i], interval.Sum[i]);
                    Set(at, _layout.MinAt[i], interval.Min[i]);
                    Set(at, _layout.MaxAt[i], interval.Max[i]);
                    Set(at, _layout.LastAt[i], interval.Last[i]);
                    if (_layout.LastAt[i] >= 0 && interval.Count[i] > 0)
                    {
                        // A checkpoint without timestamps (older format): later points of the interval replace the value.
                        var ms = interval.LastTimestampMs?[i] ?? long.MinValue;
                        _acc[at + _layout.LastAt[i] + 1] = ms == long.MinValue ? _open * _intervalMs : ms;
                    }
                }

                LastArrival = tick;
            }
        }

        /// <returns>
        /// False when the point is older than the late-merge window behind the interval being filled,
        /// or than the first interval held since start or restore.
        /// </returns>
        public bool Add(long timestampMs, ReadOnlySpan<double> values, long arrival, ITimeSeriesSink sink)
        {
            var bucket = Math.DivRem(timestampMs, _intervalMs, out var rem) - (rem < 0 ? 1 : 0);
            lock (_lock)
            {
                if (bucket > _open)
                {
                    EmitOpenLocked(sink);
                    if (_open == long.MinValue)
                    {
                        _floor = bucket;
                    }

                    _open = bucket;
                    Accumulate(Start(bucket), timestampMs, values);
                    _dirty = true;
                }
                else if (bucket == _open)
                {
                    Accumulate(SlotOf(bucket) * _layout.Stride, timestampMs, values);
                    _dirty = true;
                }
                else if (bucket < _floor || _open - bucket > _behind)
                {
                    return false;
                }
                else
                {
                    // Late but within the window: merged, and the interval written again at once, so
                    // that nothing but the open interval waits in memory (what a checkpoint saves).
                    var slot = SlotOf(bucket);
                    var at = _bucketOf[slot] == bucket ? slot * _layout.Stride : Start(bucket); // else the interval had no point yet
                    Accumulate(at, timestampMs, values);
                    Emit(sink, at, bucket);
                }

                LastArrival = arrival;
                return true;
            }
        }

        /// <returns>True when the interval held points not yet written (and has now been written).</returns>
        public bool EmitIfDirty(ITimeSeriesSink sink)
        {
            lock (_lock)
            {
                return EmitOpenLocked(sink);
            }
        }

        private bool EmitOpenLocked(ITimeSeriesSink sink)
        {
            if (!_dirty)
            {
                return false;
            }

            Emit(sink, SlotOf(_open) * _layout.Stride, _open);
            _dirty = false;
            return true;
        }

        private void Emit(ITimeSeriesSink sink, int at, long bucket)
        {
            var l = _layout;
            Span<double> output = stackalloc double[_output.FieldNames.Count];
            for (var i = 0; i < l.Aggregates.Length; i++)
            {
                output[i] = _acc[at + l.CountAt[i]] == 0 ? double.NaN : l.Aggregates[i] switch
                {
                    DownsampleAggregate.Mean => _acc[at + l.SumAt[i]] / _acc[at + l.CountAt[i]],
                    DownsampleAggregate.Min => _acc[at + l.MinAt[i]],
                    DownsampleAggregate.Max => _acc[at + l.MaxAt[i]],
                    _ => _acc[at + l.LastAt[i]],
                };
            }

            var k = l.Aggregates.Length;
            foreach (var i in l.MinMaxInputs)
            {
                var empty = _acc[at + l.CountAt[i]] == 0;
                output[k++] = empty ? double.NaN : _acc[at + l.MinAt[i]];
                output[k++] = empty ? double.NaN : _acc[at + l.MaxAt[i]];
            }

            sink.Write(_output, bucket * _intervalMs, output);
        }

        private void Accumulate(int at, long timestampMs, ReadOnlySpan<double> values)
        {
            var l = _layout;
            for (var i = 0; i < values.Length; i++)
            {
                var v = values[i];
                if (!double.IsFinite(v))
                {
                    continue;
                }

                _acc[at + l.CountAt[i]]++;
                if (l.SumAt[i] >= 0)
                {
                    _acc[at + l.SumAt[i]] += v;
                }

                if (l.MinAt[i] >= 0)
                {
                    _acc[at + l.MinAt[i]] = Math.Min(_acc[at + l.MinAt[i]], v);
                }

                if (l.MaxAt[i] >= 0)
                {
                    _acc[at + l.MaxAt[i]] = Math.Max(_acc[at + l.MaxAt[i]], v);
                }

                // Last is the value with the newest timestamp, not the last to arrive (equal timestamps: the later arrival).
                if (l.LastAt[i] >= 0 && timestampMs >= _acc[at + l.LastAt[i] + 1])
                {
                    _acc[at + l.LastAt[i]] = v;
                    _acc[at + l.LastAt[i] + 1] = timestampMs;
                }
            }
        }

        /// <summary>Gives <paramref name="bucket"/> its slot with no point in it (what the slot held is older than the window); returns the slot's offset.</summary>
        private int Start(long bucket)
        {
            var slot = SlotOf(bucket);
            _bucketOf[slot] = bucket;
            var at = slot * _layout.Stride;
            _layout.Empty.CopyTo(_acc.AsSpan(at, _layout.Stride));
            return at;
        }

        private int SlotOf(long bucket)
        {
            var r = bucket % _bucketOf.Length;
            return (int)(r < 0 ? r + _bucketOf.Length : r);
        }

        private void Set(int at, int offset, double value)
        {
            if (offset >= 0)
            {
                _acc[at + offset] = value;
            }
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
