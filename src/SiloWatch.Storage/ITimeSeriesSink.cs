namespace SiloWatch.Storage;

/// <summary>
/// Where numeric points go. <see cref="Write"/> is safe from several threads at once and never
/// waits on the network: it copies the point into a bounded in-memory buffer that a background
/// writer drains. When that buffer is full, the calling thread writes the overflowing batch to
/// local disk itself (the spool, or the embedded file), so a point is never dropped silently.
/// </summary>
public interface ITimeSeriesSink : IAsyncDisposable
{
    /// <summary>
    /// Queues one point. <paramref name="values"/> holds one number per field of
    /// <paramref name="series"/>, in order; NaN or infinite values are left out of the point.
    /// </summary>
    /// <exception cref="ArgumentException">The number of values does not match the series' fields.</exception>
    /// <exception cref="ObjectDisposedException">The sink has been disposed.</exception>
    void Write(SeriesKey series, long timestampMs, ReadOnlySpan<double> values);

    /// <summary>
    /// Completes when every point written before the call is stored, or durably spooled to disk
    /// when the store is unreachable.
    /// </summary>
    Task FlushAsync(CancellationToken ct);

    /// <summary>
    /// Completes when every point the store has been given so far is stored, or durably spooled,
    /// without closing what is still being aggregated (the downsampler's open intervals stay open:
    /// their state belongs in the caller's checkpoint, see <see cref="IIntervalCheckpoint"/>).
    /// The default is <see cref="FlushAsync"/>, for sinks that aggregate nothing.
    /// </summary>
    Task FlushStoredAsync(CancellationToken ct) => FlushAsync(ct);

    StorageHealth Health { get; }
}

/// <summary>
/// A sink that aggregates points into open intervals before they reach the store (the
/// <see cref="Downsampler"/>). A caller that checkpoints its input position saves the open
/// interval of each of its series with it and restores it after a restart, so that the interval
/// is completed with exactly the points it would have had, neither losing nor counting twice the
/// points before the checkpoint.
/// </summary>
public interface IIntervalCheckpoint
{
    /// <summary>The open interval of <paramref name="series"/>, or null when it has none (or is not aggregated).</summary>
    OpenInterval? CaptureInterval(SeriesKey series);

    /// <summary>Replaces the open interval of <paramref name="series"/> with <paramref name="interval"/> (before any point of it is written).</summary>
    void RestoreInterval(SeriesKey series, OpenInterval interval);
}

/// <summary>
/// The state of one open downsampling interval: its index (timestamp / interval, floored), whether
/// it holds points not yet written, and the per-field accumulators (NaN and infinities included,
/// so serialise with named floating-point literals allowed). A field keeps only the accumulators its
/// aggregate needs; the others hold their empty value (sum 0, min +∞, max −∞, last NaN).
/// <paramref name="LastTimestampMs"/> is the timestamp of each field's "last" value (long.MinValue
/// for none), null when no field is aggregated as Last or in a checkpoint saved before it existed.
/// </summary>
public sealed record OpenInterval(long Bucket, bool Dirty, double[] Sum, int[] Count, double[] Min, double[] Max, double[] Last, long[]? LastTimestampMs = null);

/// <summary>A snapshot of the write path's state, for health checks and the status page.</summary>
public sealed record StorageHealth
{
    /// <summary>"influx" or "sqlite".</summary>
    public required string Backend { get; init; }

    /// <summary>False while the store refuses or cannot be reached (points go to the spool).</summary>
    public bool StoreReachable { get; init; }

    /// <summary>Points accepted by Write and not yet stored or spooled.</summary>
    public long BufferedPoints { get; init; }

    public long BufferCapacityPoints { get; init; }

    /// <summary>Points acknowledged by the store, replays included.</summary>
    public long WrittenPoints { get; init; }

    /// <summary>Points put in the spool since start.</summary>
    public long SpooledPoints { get; init; }

    /// <summary>Points sent from the spool since start.</summary>
    public long ReplayedPoints { get; init; }

    /// <summary>Points that found the in-memory buffer full and were written to disk by the caller.</summary>
    public long OverflowPoints { get; init; }

    public long SpoolBytes { get; init; }

    public long SpoolMaxBytes { get; init; }

    /// <summary>Raised when the spool reaches its alarm percentage of <see cref="SpoolMaxBytes"/>.</summary>
    public bool SpoolNearlyFull { get; init; }

    /// <summary>Points given up on purpose (spool full: oldest first; or an unrecoverable store error). Logged as errors.</summary>
    public long DiscardedPoints { get; init; }

    /// <summary>Points the store refused as malformed; kept in the spool directory's rejected file.</summary>
    public long RejectedPoints { get; init; }

    /// <summary>Points with no finite field value, which line protocol cannot carry.</summary>
    public long SkippedNonFinitePoints { get; init; }

    /// <summary>
    /// Points of a downsampled series that came more than its rule's LateMergeWindow behind the
    /// interval being filled, or before the first interval held since start: not written.
    /// </summary>
    public long LatePoints { get; init; }

    public DateTimeOffset? LastStoredUtc { get; init; }

    /// <summary>The last error, without secrets.</summary>
    public string? LastError { get; init; }

    /// <summary>True when the store takes points, the spool is not nearly full and nothing was lost.</summary>
    public bool IsHealthy => StoreReachable && !SpoolNearlyFull && DiscardedPoints == 0;
}
