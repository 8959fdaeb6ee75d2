using Microsoft.Data.Sqlite;
using Microsoft.Extensions.Logging;

namespace SiloWatch.Storage;

/// <summary>One stored value of the embedded store.</summary>
public readonly record struct StoredSample(string Measurement, string TagSet, string Field, long TimestampMs, double Value);

/// <summary>
/// The embedded time-series store (the default when no URL is configured): a SQLite file in WAL
/// mode, one row per (series field, timestamp). Rewriting the same series field and timestamp
/// replaces the value, as InfluxDB does. The same bounded buffer as the InfluxDB sink sits in
/// front (<see cref="BufferedSinkFront"/>); when it is full the calling thread writes the
/// overflowing batch to the file itself.
/// Samples older than the retention are pruned hourly.
/// </summary>
public sealed partial class SqliteTimeSeriesSink : ITimeSeriesSink
{
    private const int SchemaVersion = 1;
    private static readonly TimeSpan PruneEvery = TimeSpan.FromHours(1);

    private readonly Lock _db = new();
    private readonly SqliteConnection _connection;
    private readonly SqliteCommand _insert;
    private readonly SqliteParameter _pSeries;
    private readonly SqliteParameter _pTs;
    private readonly SqliteParameter _pValue;
    private readonly Dictionary<int, long[]> _fieldIds = [];
    private readonly TimeSpan _retention;
    private readonly TimeProvider _timeProvider;
    private readonly ILogger _logger;
    private readonly BufferedSinkFront _front;
    private readonly Task _writer;
    private DateTimeOffset _nextPrune;
    private volatile bool _failing;
    private long _discarded;
    private bool _disposed;

    public SqliteTimeSeriesSink(string path, TimeSeriesOptions options, TimeSpan retention, TimeProvider timeProvider, ILogger<SqliteTimeSeriesSink> logger)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(path);
        ArgumentNullException.ThrowIfNull(options);
        ArgumentNullException.ThrowIfNull(timeProvider);
        ArgumentNullException.ThrowIfNull(logger);
        _retention = retention;
        _timeProvider = timeProvider;
        _logger = logger;
        Path = System.IO.Path.GetFullPath(path);
        Directory.CreateDirectory(System.IO.Path.GetDirectoryName(Path)!);
        _connection = new SqliteConnection(new SqliteConnectionStringBuilder { DataSource = Path, Pooling = false }.ToString());
        _connection.Open();
        Execute("PRAGMA journal_mode=WAL; PRAGMA synchronous=NORMAL; PRAGMA busy_timeout=5000;");
        var version = Convert.ToInt32(Scalar("PRAGMA user_version"), System.Globalization.CultureInfo.InvariantCulture);
        if (version > SchemaVersion)
        {
            throw new InvalidOperationException($"{Path}: schema version {version} is newer than this program's ({SchemaVersion})");
        }

        Execute("""
            CREATE TABLE IF NOT EXISTS series(
                id INTEGER PRIMARY KEY,
                measurement TEXT NOT NULL,
                tags TEXT NOT NULL,
                field TEXT NOT NULL,
                UNIQUE(measurement, tags, field));
            CREATE TABLE IF NOT EXISTS samples(
                series_id INTEGER NOT NULL REFERENCES series(id),
                ts_ms INTEGER NOT NULL,
                value REAL NOT NULL,
                PRIMARY KEY(series_id, ts_ms)) WITHOUT ROWID;
            PRAGMA user_version = 1;
            """);
        _insert = _connection.CreateCommand();
        _insert.CommandText = "INSERT OR REPLACE INTO samples(series_id, ts_ms, value) VALUES($s, $t, $v)";
        _pSeries = _insert.Parameters.Add("$s", SqliteType.Integer);
        _pTs = _insert.Parameters.Add("$t", SqliteType.Integer);
        _pValue = _insert.Parameters.Add("$v", SqliteType.Real);
        _nextPrune = timeProvider.GetUtcNow();
        _front = new BufferedSinkFront(options, timeProvider, WriteOverflow);
        LogStarted(_logger, Path, retention);
        _writer = Task.Run(RunAsync);
    }

    public string Path { get; }

    public StorageHealth Health => _front.Health("sqlite", reachable: !_failing) with
    {
        DiscardedPoints = Interlocked.Read(ref _discarded),
    };

    public void Write(SeriesKey series, long timestampMs, ReadOnlySpan<double> values) => _front.Write(series, timestampMs, values);

    public Task FlushAsync(CancellationToken ct) => _front.FlushAsync(ct);

    /// <summary>
    /// Stored samples of one field of a measurement, from <paramref name="fromMs"/> (inclusive) to
    /// <paramref name="toMs"/> (exclusive), ordered by series then time; <paramref name="tags"/>
    /// (optional) must all match.
    /// </summary>
    public IReadOnlyList<StoredSample> Query(string measurement, string field, IEnumerable<KeyValuePair<string, string>>? tags, long fromMs, long toMs)
    {
        lock (_db)
        {
            ObjectDisposedException.ThrowIf(_disposed, this);
            return EmbeddedSeriesReader.Query(_connection, measurement, field, tags, fromMs, toMs);
        }
    }

    public async ValueTask DisposeAsync()
    {
        lock (_db)
        {
            if (_disposed)
            {
                return;
            }
        }

        _front.Complete();
        await _writer.ConfigureAwait(false);
        lock (_db)
        {
            _disposed = true;
            _insert.Dispose();
            _connection.Dispose();
        }

        _front.Dispose();
    }

    private async Task RunAsync()
    {
        await foreach (var item in _front.Reader.ReadAllAsync().ConfigureAwait(false))
        {
            await _front.HandleAsync(item, WriteBatchAsync).ConfigureAwait(false);
            if (_timeProvider.GetUtcNow() >= _nextPrune)
            {
                Prune();
            }
        }
    }

    private async Task WriteBatchAsync(PointBatch batch)
    {
        try
        {
            await WriteWithRetryAsync(batch).ConfigureAwait(false);
        }
        catch (Exception ex) when (ex is not SqliteException)
        {
            // A bug must not stop the writer: later batches and flushes still need it.
            _front.LastError = ex.Message;
            Interlocked.Add(ref _discarded, batch.Count);
            LogWriteFailed(_logger, batch.Count, ex);
        }
    }

    private async Task WriteWithRetryAsync(PointBatch batch)
    {
        // A local file fails for a reason that rarely clears at once (disk full, locked by another
        // program): three tries a second apart, then the batch is counted as discarded and logged.
        for (var attempt = 1; ; attempt++)
        {
            try
            {
                lock (_db)
                {
                    WriteLocked(batch);
                }

                if (_failing)
                {
                    _failing = false;
                    _front.LastError = null;
                }

                return;
            }
            catch (SqliteException ex) when (attempt < 3)
            {
                _front.LastError = ex.Message;
                _failing = true;
                await Task.Delay(TimeSpan.FromSeconds(1), _timeProvider).ConfigureAwait(false);
            }
            catch (SqliteException ex)
            {
                _front.LastError = ex.Message;
                _failing = true;
                Interlocked.Add(ref _discarded, batch.Count);
                LogWriteFailed(_logger, batch.Count, ex);
                return;
            }
        }
    }

    private void WriteOverflow(PointBatch batch)
    {
        try
        {
            lock (_db)
            {
                WriteLocked(batch);
            }
        }
        catch (SqliteException ex)
        {
            _front.LastError = ex.Message;
            _failing = true;
            Interlocked.Add(ref _discarded, batch.Count);
            LogWriteFailed(_logger, batch.Count, ex);
        }
    }

    private void WriteLocked(PointBatch batch)
    {
        using var tx = _connection.BeginTransaction();
        _insert.Transaction = tx;
        var written = 0;
        var skipped = 0;
        for (var i = 0; i < batch.Count; i++)
        {
            var series = batch.Series[i];
            var ids = FieldIdsLocked(series, tx);
            var values = batch.ValuesOf(i);
            var any = false;
            for (var f = 0; f < values.Length; f++)
            {
                if (!double.IsFinite(values[f]))
                {
                    continue;
                }

                _pSeries.Value = ids[f];
                _pTs.Value = batch.Timestamps[i];
                _pValue.Value = values[f];
                _insert.ExecuteNonQuery();
                any = true;
            }

            if (any)
            {
                written++;
            }
            else
            {
                skipped++;
            }
        }

        tx.Commit();
        _insert.Transaction = null;
        _front.Stored(written);
        _front.Skipped(skipped);
    }

    private long[] FieldIdsLocked(SeriesKey series, SqliteTransaction tx)
    {
        if (_fieldIds.TryGetValue(series.Id, out var ids))
        {
            return ids;
        }

        ids = new long[series.FieldNames.Count];
        using var upsert = _connection.CreateCommand();
        upsert.Transaction = tx;
        upsert.CommandText = """
            INSERT INTO series(measurement, tags, field) VALUES($m, $t, $f) ON CONFLICT DO NOTHING;
            SELECT id FROM series WHERE measurement = $m AND tags = $t AND field = $f;
            """;
        upsert.Parameters.AddWithValue("$m", series.Measurement);
        upsert.Parameters.AddWithValue("$t", series.EscapedTagSet);
        var pField = upsert.Parameters.Add("$f", SqliteType.Text);
        for (var f = 0; f < ids.Length; f++)
        {
            pField.Value = series.FieldNames[f];
            ids[f] = (long)upsert.ExecuteScalar()!;
        }

        _fieldIds[series.Id] = ids;
        return ids;
    }

    private void Prune()
    {
        var now = _timeProvider.GetUtcNow();
        _nextPrune = now + PruneEvery;
        var cutMs = (now - _retention).ToUnixTimeMilliseconds();
        try
        {
            lock (_db)
            {
                using var prune = _connection.CreateCommand();
                // Per series, so the primary key (series_id, ts_ms) serves the delete.
                prune.CommandText = "DELETE FROM samples WHERE series_id IN (SELECT id FROM series) AND ts_ms < $cut";
                prune.Parameters.AddWithValue("$cut", cutMs);
                var removed = prune.ExecuteNonQuery();
                if (removed > 0)
                {
                    LogPruned(_logger, removed, _retention);
                }
            }
        }
        catch (SqliteException ex)
        {
            _front.LastError = ex.Message;
            LogPruneFailed(_logger, ex);
        }
    }

    private void Execute(string sql)
    {
        using var command = _connection.CreateCommand();
        command.CommandText = sql;
        command.ExecuteNonQuery();
    }

    private object? Scalar(string sql)
    {
        using var command = _connection.CreateCommand();
        command.CommandText = sql;
        return command.ExecuteScalar();
    }

    [LoggerMessage(Level = LogLevel.Information, Message = "Embedded time-series store {Path}, retention {Retention}")]
    private static partial void LogStarted(ILogger logger, string path, TimeSpan retention);

    [LoggerMessage(Level = LogLevel.Error, Message = "Embedded time-series store: {Points} points could not be written and are lost")]
    private static partial void LogWriteFailed(ILogger logger, int points, Exception exception);

    [LoggerMessage(Level = LogLevel.Information, Message = "Embedded time-series store: pruned {Rows} samples older than {Retention}")]
    private static partial void LogPruned(ILogger logger, int rows, TimeSpan retention);

    [LoggerMessage(Level = LogLevel.Warning, Message = "Embedded time-series store: pruning failed")]
    private static partial void LogPruneFailed(ILogger logger, Exception exception);
}
