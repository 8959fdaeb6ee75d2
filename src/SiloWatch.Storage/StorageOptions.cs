namespace SiloWatch.Storage;

/// <summary>
/// Where SiloWatch keeps its data: the time-series store (InfluxDB v2 write API, or the embedded
/// SQLite file when <see cref="TimeSeriesOptions.Url"/> is empty), the event and alarm journal,
/// and the downsampling applied before points reach the store. Bound from the
/// <see cref="SectionName"/> section.
/// </summary>
public sealed class StorageOptions
{
    public const string SectionName = "Storage";

    /// <summary>Environment variable that carries the time-series store's API token.</summary>
    public const string TokenEnvironmentVariable = "SILOWATCH_INFLUX_TOKEN";

    public TimeSeriesOptions TimeSeries { get; set; } = new();

    /// <summary>Embedded time-series file, used when <see cref="TimeSeriesOptions.Url"/> is empty. Default "data/silowatch-series.db".</summary>
    public string EmbeddedPath { get; set; } = "data/silowatch-series.db";

    /// <summary>How long the embedded store keeps samples; older ones are pruned hourly. Default 30 days.</summary>
    public TimeSpan EmbeddedRetention { get; set; } = TimeSpan.FromDays(30);

    /// <summary>Event, alarm, calibration, tare and snapshot journal (SQLite). Default "data/silowatch-journal.db".</summary>
    public string JournalPath { get; set; } = "data/silowatch-journal.db";

    /// <summary>
    /// Downsampling rules by measurement name. Measurements without a rule are written as they come.
    /// Defaults: "sensor" 1 s mean with min/max of "value" and the worst (highest) quality code;
    /// "silo_estimate" 1 s last. A rule with Interval 00:00:00 turns downsampling off for that measurement.
    /// </summary>
    public Dictionary<string, DownsamplingOptions> Downsampling { get; set; } = new(StringComparer.Ordinal)
    {
        [Measurements.Sensor] = new()
        {
            Interval = TimeSpan.FromSeconds(1),
            Aggregate = DownsampleAggregate.Mean,
            MinMaxFields = [SensorFields.Value],
            FieldAggregates = new(StringComparer.Ordinal) { [SensorFields.Quality] = DownsampleAggregate.Max },
        },
        [Measurements.SiloEstimate] = new()
        {
            Interval = TimeSpan.FromSeconds(1),
            Aggregate = DownsampleAggregate.Last,
        },
    };
}

/// <summary>The InfluxDB v2 compatible time-series store and the write path in front of it.</summary>
public sealed class TimeSeriesOptions
{
    /// <summary>Base URL of the store, e.g. "http://127.0.0.1:8086". Empty (the default) selects the embedded SQLite store.</summary>
    public string Url { get; set; } = "";

    /// <summary>Organisation (InfluxDB 2) or database owner; ignored by InfluxDB 3 and VictoriaMetrics. Default "silowatch".</summary>
    public string Org { get; set; } = "silowatch";

    /// <summary>Bucket (InfluxDB 2) or database (InfluxDB 3). Default "silowatch".</summary>
    public string Bucket { get; set; } = "silowatch";

    /// <summary>
    /// File holding the API token (first line). The environment variable SILOWATCH_INFLUX_TOKEN wins
    /// over it. Never put the token itself in committed configuration. Default empty (no token).
    /// </summary>
    public string TokenFile { get; set; } = "";

    /// <summary>Points per write request. Default 5000.</summary>
    public int BatchSize { get; set; } = 5000;

    /// <summary>A partly filled batch is sent at the latest this long after its first point. Default 1 s.</summary>
    public TimeSpan FlushInterval { get; set; } = TimeSpan.FromSeconds(1);

    /// <summary>
    /// Points held in memory between the callers of Write and the background writer. When full, the
    /// calling thread writes the overflowing batch to the disk spool itself (a local append, no network),
    /// so nothing is dropped. Default 200 000.
    /// </summary>
    public int BufferCapacityPoints { get; set; } = 200_000;

    /// <summary>Timeout of one write request. Default 10 s.</summary>
    public TimeSpan RequestTimeout { get; set; } = TimeSpan.FromSeconds(10);

    /// <summary>Directory of the outage spool. Default "data/spool".</summary>
    public string SpoolDirectory { get; set; } = "data/spool";

    /// <summary>
    /// Upper bound of the spool on disk. When a new batch would exceed it, the oldest spooled
    /// points are discarded (counted, logged as an error). Default 1 GiB; at least 64 KiB.
    /// </summary>
    public long SpoolMaxBytes { get; set; } = 1L << 30;

    /// <summary>The health flag SpoolNearlyFull is raised at this fill level of <see cref="SpoolMaxBytes"/>, percent. Default 80.</summary>
    public int SpoolAlarmPercent { get; set; } = 80;

    public RetryOptions Retry { get; set; } = new();
}

/// <summary>Retry of a failed write (exponential backoff with jitter) and the pace of probing a store that is down.</summary>
public sealed class RetryOptions
{
    /// <summary>Retries of one batch before it goes to the spool. Default 3.</summary>
    public int MaxAttempts { get; set; } = 3;

    /// <summary>First retry delay; it doubles on each attempt. Default 500 ms.</summary>
    public TimeSpan BaseDelay { get; set; } = TimeSpan.FromMilliseconds(500);

    /// <summary>Longest delay between retries and between probes of a store that is down. Default 30 s.</summary>
    public TimeSpan MaxDelay { get; set; } = TimeSpan.FromSeconds(30);
}

public enum DownsampleAggregate
{
    Mean,
    Min,
    Max,
    Last,
}

/// <summary>Downsampling of one measurement into fixed intervals aligned to the Unix epoch.</summary>
public sealed class DownsamplingOptions
{
    /// <summary>Interval length; points are stamped with the interval's start. 00:00:00 turns the rule off. Default 1 s.</summary>
    public TimeSpan Interval { get; set; } = TimeSpan.FromSeconds(1);

    /// <summary>Aggregate of every field not named in <see cref="FieldAggregates"/>. Default Mean.</summary>
    public DownsampleAggregate Aggregate { get; set; } = DownsampleAggregate.Mean;

    /// <summary>Fields that also get "{field}_min" and "{field}_max" beside their aggregate. Default none.</summary>
    public List<string> MinMaxFields { get; set; } = [];

    /// <summary>Per-field aggregate overrides, e.g. quality: Max (the worst code in the interval). Default none.</summary>
    public Dictionary<string, DownsampleAggregate> FieldAggregates { get; set; } = new(StringComparer.Ordinal);

    /// <summary>
    /// How far behind the interval being filled a late point (store-and-forward gateway, reordering
    /// network) is still merged into its interval, which is then written again with the same
    /// timestamp. Older points are counted (health: LatePoints), logged and not written. Memory grows
    /// with it: each series keeps the window's intervals, allocated once (a sensor series at 1 s about
    /// 72 bytes per second of window, an estimate series about 150). Default 10 s: reordering and short
    /// gateway hiccups; a longer store-and-forward gap needs a longer window and its memory. 00:00:00 (only the
    /// interval being filled takes points) to 01:00:00, and at most <see cref="MaxLateMergeIntervals"/>
    /// intervals.
    /// </summary>
    public TimeSpan LateMergeWindow { get; set; } = TimeSpan.FromSeconds(10);

    /// <summary>Upper bound of <see cref="LateMergeWindow"/> in intervals (memory per series).</summary>
    public const int MaxLateMergeIntervals = 3600;
}
