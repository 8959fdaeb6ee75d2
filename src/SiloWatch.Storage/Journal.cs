using System.Globalization;
using Microsoft.Data.Sqlite;
using Microsoft.Extensions.Logging;
using Microsoft.Extensions.Logging.Abstractions;

namespace SiloWatch.Storage;

/// <summary>
/// The plant's record: alarm transitions, discharge events, calibrations, tares, and snapshots
/// that let a restart resume where it stopped. One SQLite file in WAL mode; the schema is
/// versioned with PRAGMA user_version and migrated forward on open (a newer file is refused).
/// Calls are synchronous and take a few milliseconds (one transaction each); they are safe from
/// several threads. Keep them off the per-sample path: they are made for state changes.
/// </summary>
public sealed partial class Journal : IDisposable
{
    private readonly Lock _lock = new();
    private readonly SqliteConnection _connection;
    private readonly TimeProvider _timeProvider;
    private bool _disposed;

    public Journal(string path, TimeProvider timeProvider, ILogger<Journal>? logger = null)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(path);
        ArgumentNullException.ThrowIfNull(timeProvider);
        _timeProvider = timeProvider;
        var log = (ILogger?)logger ?? NullLogger.Instance;
        Path = System.IO.Path.GetFullPath(path);
        Directory.CreateDirectory(System.IO.Path.GetDirectoryName(Path)!);
        _connection = new SqliteConnection(new SqliteConnectionStringBuilder { DataSource = Path, Pooling = false }.ToString());
        _connection.Open();
        try
        {
            // Checkpoints rewrite every busy silo's resume point each second (a few kB each): with SQLite's
            // default 2 MB page cache, 400 silos' rows no longer fitted and each save read its pages back
            // from the file. The cache grows only as far as pages are used.
            Execute("PRAGMA journal_mode=WAL; PRAGMA synchronous=NORMAL; PRAGMA busy_timeout=5000; PRAGMA foreign_keys=ON; PRAGMA cache_size=-16384;");
            var from = UserVersion();
            Migrate(from);
            if (from != SchemaVersion)
            {
                LogMigrated(log, Path, from, SchemaVersion);
            }
        }
        catch
        {
            _connection.Dispose();
            throw;
        }
    }

    /// <summary>Opens a journal that must exist already (review tools: a wrong path must not create an empty journal).</summary>
    /// <exception cref="FileNotFoundException">No file at <paramref name="path"/>.</exception>
    public static Journal OpenExisting(string path, TimeProvider timeProvider)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(path);
        if (!File.Exists(path))
        {
            throw new FileNotFoundException($"no journal at {System.IO.Path.GetFullPath(path)}", path);
        }

        return new Journal(path, timeProvider);
    }

    /// <summary>The schema version this program writes.</summary>
    public static int SchemaVersion => JournalSchema.CurrentVersion;

    public string Path { get; }

    public long AppendAlarmTransition(AlarmTransitionRecord record)
    {
        ArgumentNullException.ThrowIfNull(record);
        return Insert(
            "INSERT INTO alarm_transitions(ts_ms, site, silo, alarm, from_state, to_state, priority, value, limit_value, message, user) VALUES($ts, $site, $silo, $alarm, $from, $to, $priority, $value, $limit, $message, $user)",
            ("$ts", record.TimestampMs), ("$site", record.SiteId), ("$silo", record.SiloId), ("$alarm", record.AlarmId),
            ("$from", record.FromState), ("$to", record.ToState), ("$priority", record.Priority), ("$value", Real(record.Value)),
            ("$limit", Real(record.Limit)), ("$message", record.Message), ("$user", record.User));
    }

    /// <summary>Records a new event (in progress when EndedMs is null) and returns its id.</summary>
    public long AppendEvent(DischargeEventRecord record)
    {
        ArgumentNullException.ThrowIfNull(record);
        return Insert(
            EventInsert,
            EventParameters(record));
    }

    /// <summary>Rewrites an event by id (progress, or its end).</summary>
    /// <exception cref="KeyNotFoundException">No event has that id.</exception>
    public void UpdateEvent(DischargeEventRecord record)
    {
        ArgumentNullException.ThrowIfNull(record);
        var changed = NonQuery(
            EventUpdate,
            [.. EventParameters(record), ("$id", record.Id)]);
        if (changed == 0)
        {
            throw new KeyNotFoundException($"no discharge event with id {record.Id}");
        }
    }

    public DischargeEventRecord? GetEvent(long id) =>
        Query(EventSelect + " WHERE id = $id", ReadEvent, ("$id", id)).FirstOrDefault();

    /// <summary>The latest event of a silo still in progress, if any.</summary>
    public DischargeEventRecord? FindOpenEvent(string siteId, string siloId) =>
        Query(EventSelect + " WHERE site = $site AND silo = $silo AND ended_ms IS NULL ORDER BY started_ms DESC LIMIT 1", ReadEvent, ("$site", siteId), ("$silo", siloId))
            .FirstOrDefault();

    /// <summary>Events overlapping [fromMs, toMs), oldest first; site and silo null match all.</summary>
    public IReadOnlyList<DischargeEventRecord> QueryEvents(string? siteId, string? siloId, long fromMs, long toMs, int limit = 10_000) =>
        QueryEvents(new EventQuery(siteId, siloId, fromMs, toMs, Limit: limit));

    /// <summary>Events matching every filter of <paramref name="query"/>, oldest first.</summary>
    public IReadOnlyList<DischargeEventRecord> QueryEvents(EventQuery query)
    {
        ArgumentNullException.ThrowIfNull(query);
        return Query(
            EventSelect + " WHERE ($site IS NULL OR site = $site) AND ($silo IS NULL OR silo = $silo) AND started_ms < $to AND (ended_ms IS NULL OR ended_ms >= $from)"
                + " AND ($prio IS NULL OR (highest_priority IS NOT NULL AND highest_priority <= $prio)) AND ($asym IS NULL OR max_asymmetry_ratio >= $asym)"
                + " AND ($finished = 0 OR ended_ms IS NOT NULL) ORDER BY started_ms, id LIMIT $limit",
            ReadEvent, ("$site", query.SiteId), ("$silo", query.SiloId), ("$from", query.FromMs), ("$to", query.ToMs), ("$prio", query.HighestPriorityAtMost),
            ("$asym", query.MinAsymmetryRatio), ("$finished", query.FinishedOnly ? 1 : 0), ("$limit", query.Limit));
    }

    /// <summary>Saves (replaces) the capture of an event's series, compressed (<see cref="EventCaptureCodec"/>).</summary>
    /// <exception cref="KeyNotFoundException">No event has that id.</exception>
    public void SaveCapture(long eventId, EventCapture capture)
    {
        ArgumentNullException.ThrowIfNull(capture);
        if (GetEvent(eventId) is null)
        {
            throw new KeyNotFoundException($"no discharge event with id {eventId}");
        }

        NonQuery(
            CaptureUpsert,
            [("$id", eventId), ("$format", EventCaptureCodec.Format), ("$frames", capture.Frames.Count), ("$channels", capture.Channels.Count), ("$data", EventCaptureCodec.Encode(capture))]);
    }

    /// <summary>
    /// Completes an event in one transaction: rewrites its row (or adds it when it has no id or its row is
    /// gone) and stores its capture, so a reader never sees the finished event without its capture. Returns the id.
    /// </summary>
    public long CompleteEvent(DischargeEventRecord record, EventCapture? capture)
    {
        ArgumentNullException.ThrowIfNull(record);
        var blob = capture is null ? null : EventCaptureCodec.Encode(capture);
        lock (_lock)
        {
            ObjectDisposedException.ThrowIf(_disposed, this);
            using var tx = _connection.BeginTransaction();
            long id = record.Id;
            var changed = 0;
            if (id > 0)
            {
                using var update = Command(
                    EventUpdate,
                    [.. EventParameters(record), ("$id", id)]);
                update.Transaction = tx;
                changed = update.ExecuteNonQuery();
            }

            if (changed == 0)
            {
                using var insert = Command(EventInsert + " RETURNING id",
                    EventParameters(record));
                insert.Transaction = tx;
                id = (long)insert.ExecuteScalar()!;
            }

            if (capture is not null)
            {
                using var save = Command(
                    CaptureUpsert,
                    [("$id", id), ("$format", EventCaptureCodec.Format), ("$frames", capture.Frames.Count), ("$channels", capture.Channels.Count), ("$data", blob)]);
                save.Transaction = tx;
                save.ExecuteNonQuery();
            }

            tx.Commit();
            return id;
        }
    }

    /// <summary>The capture of an event, or null when none was stored.</summary>
    /// <exception cref="InvalidDataException">The stored capture is damaged or of an unknown format.</exception>
    public EventCapture? LoadCapture(long eventId)
    {
        var blob = Query("SELECT data FROM event_captures WHERE event_id = $id", r => (byte[])r.GetValue(0), ("$id", eventId)).FirstOrDefault();
        return blob is null ? null : EventCaptureCodec.Decode(blob);
    }

    /// <summary>Stored size of an event's capture in bytes (compressed), 0 when none.</summary>
    public long CaptureBytes(long eventId) =>
        Query("SELECT length(data) FROM event_captures WHERE event_id = $id", r => r.GetInt64(0), ("$id", eventId)).FirstOrDefault();

    /// <summary>Alarm transitions in [fromMs, toMs), oldest first; site and silo null match all.</summary>
    public IReadOnlyList<AlarmTransitionRecord> QueryAlarmHistory(string? siteId, string? siloId, long fromMs, long toMs, int limit = 100_000) =>
        Query(
            "SELECT ts_ms, site, silo, alarm, from_state, to_state, priority, value, limit_value, message, user FROM alarm_transitions WHERE ($site IS NULL OR site = $site) AND ($silo IS NULL OR silo = $silo) AND ts_ms >= $from AND ts_ms < $to ORDER BY ts_ms, id LIMIT $limit",
            r => new AlarmTransitionRecord(r.GetInt64(0), r.GetString(1), r.GetString(2), r.GetString(3), r.GetString(4), r.GetString(5), r.GetInt32(6),
                NullableReal(r, 7), NullableReal(r, 8), r.GetString(9), r.IsDBNull(10) ? null : r.GetString(10)),
            ("$site", siteId), ("$silo", siloId), ("$from", fromMs), ("$to", toMs), ("$limit", limit));

    public long AppendCalibration(CalibrationRecord record)
    {
        ArgumentNullException.ThrowIfNull(record);
        return Insert(
            "INSERT INTO calibrations(ts_ms, site, silo, sensor, parameter, old_value, new_value, method, user, note) VALUES($ts, $site, $silo, $sensor, $param, $old, $new, $method, $user, $note)",
            ("$ts", record.TimestampMs), ("$site", record.SiteId), ("$silo", record.SiloId), ("$sensor", record.SensorId), ("$param", record.Parameter),
            ("$old", Real(record.OldValue)), ("$new", Real(record.NewValue)), ("$method", record.Method), ("$user", record.User), ("$note", record.Note));
    }

    public IReadOnlyList<CalibrationRecord> QueryCalibrations(string? siteId, string? siloId, long fromMs, long toMs) =>
        Query(
            "SELECT ts_ms, site, silo, sensor, parameter, old_value, new_value, method, user, note FROM calibrations WHERE ($site IS NULL OR site = $site) AND ($silo IS NULL OR silo = $silo) AND ts_ms >= $from AND ts_ms < $to ORDER BY ts_ms, id",
            r => new CalibrationRecord(r.GetInt64(0), r.GetString(1), r.GetString(2), r.GetString(3), r.GetString(4), NullableReal(r, 5), NullableReal(r, 6),
                r.GetString(7), r.IsDBNull(8) ? null : r.GetString(8), r.IsDBNull(9) ? null : r.GetString(9)),
            ("$site", siteId), ("$silo", siloId), ("$from", fromMs), ("$to", toMs));

    public long AppendTare(TareRecord record)
    {
        ArgumentNullException.ThrowIfNull(record);
        return Insert(
            "INSERT INTO tares(ts_ms, site, silo, tare_kg, previous_tare_kg, user, reason) VALUES($ts, $site, $silo, $tare, $prev, $user, $reason)",
            ("$ts", record.TimestampMs), ("$site", record.SiteId), ("$silo", record.SiloId), ("$tare", record.TareKg), ("$prev", record.PreviousTareKg),
            ("$user", record.User), ("$reason", record.Reason));
    }

    public IReadOnlyList<TareRecord> QueryTares(string? siteId, string? siloId, long fromMs, long toMs) =>
        Query(
            "SELECT ts_ms, site, silo, tare_kg, previous_tare_kg, user, reason FROM tares WHERE ($site IS NULL OR site = $site) AND ($silo IS NULL OR silo = $silo) AND ts_ms >= $from AND ts_ms < $to ORDER BY ts_ms, id",
            r => new TareRecord(r.GetInt64(0), r.GetString(1), r.GetString(2), r.GetDouble(3), r.GetDouble(4), r.IsDBNull(5) ? null : r.GetString(5), r.IsDBNull(6) ? null : r.GetString(6)),
            ("$site", siteId), ("$silo", siloId), ("$from", fromMs), ("$to", toMs));

    /// <summary>Saves (replaces) the snapshot of one kind for a silo ("site/silo").</summary>
    public void SaveSnapshot(string siloKey, string kind, string json)
    {
        ArgumentException.ThrowIfNullOrEmpty(siloKey);
        ArgumentException.ThrowIfNullOrEmpty(kind);
        ArgumentNullException.ThrowIfNull(json);
        NonQuery(
            SnapshotUpsert,
            [("$key", siloKey), ("$kind", kind), ("$json", json), ("$ts", _timeProvider.GetUtcNow().ToUnixTimeMilliseconds())]);
    }

    /// <summary>
    /// Saves (replaces) several snapshots in one transaction: all of them or none, and one commit
    /// instead of one per snapshot (a checkpoint of a worker's silos saves hundreds at a time).
    /// The JSON comes as UTF-8, the journal's own encoding, and is stored as text: a checkpoint
    /// of hundreds of silos a second is then neither held as UTF-16 nor converted again here.
    /// </summary>
    public void SaveSnapshots(IReadOnlyList<(string SiloKey, string Kind, byte[] Utf8Json)> snapshots)
    {
        ArgumentNullException.ThrowIfNull(snapshots);
        foreach (var (key, kind, json) in snapshots)
        {
            ArgumentException.ThrowIfNullOrEmpty(key);
            ArgumentException.ThrowIfNullOrEmpty(kind);
            ArgumentNullException.ThrowIfNull(json);
        }

        lock (_lock)
        {
            ObjectDisposedException.ThrowIf(_disposed, this);
            using var tx = _connection.BeginTransaction();
            // One statement, prepared once and bound again for each silo. CAST: SQLite reads a blob's bytes as
            // text in the database's encoding (UTF-8 here), so the column keeps holding text.
            using var save = Command(SnapshotUpsertUtf8,
                [("$key", ""), ("$kind", ""), ("$json", Array.Empty<byte>()), ("$ts", _timeProvider.GetUtcNow().ToUnixTimeMilliseconds())]);
            save.Transaction = tx;
            save.Prepare();
            foreach (var (key, kind, json) in snapshots)
            {
                save.Parameters["$key"].Value = key;
                save.Parameters["$kind"].Value = kind;
                save.Parameters["$json"].Value = json;
                save.ExecuteNonQuery();
            }

            tx.Commit();
        }
    }

    /// <summary>The JSON saved last for this silo and kind, or null.</summary>
    public string? LoadSnapshot(string siloKey, string kind) =>
        Query("SELECT json FROM snapshots WHERE silo_key = $key AND kind = $kind", r => r.GetString(0), ("$key", siloKey), ("$kind", kind)).FirstOrDefault();

    /// <summary>Every snapshot of one kind, for resuming all silos at start-up.</summary>
    public IReadOnlyList<SnapshotRecord> LoadSnapshots(string kind) =>
        Query("SELECT silo_key, kind, json, updated_ms FROM snapshots WHERE kind = $kind ORDER BY silo_key",
            r => new SnapshotRecord(r.GetString(0), r.GetString(1), r.GetString(2), r.GetInt64(3)), ("$kind", kind));

    public bool DeleteSnapshot(string siloKey, string kind) =>
        NonQuery("DELETE FROM snapshots WHERE silo_key = $key AND kind = $kind", [("$key", siloKey), ("$kind", kind)]) > 0;

    public void Dispose()
    {
        lock (_lock)
        {
            if (!_disposed)
            {
                _disposed = true;
                _connection.Dispose();
            }
        }
    }

    private const string SnapshotReplace = " ON CONFLICT(silo_key, kind) DO UPDATE SET json = excluded.json, updated_ms = excluded.updated_ms";

    private const string SnapshotUpsert = "INSERT INTO snapshots(silo_key, kind, json, updated_ms) VALUES($key, $kind, $json, $ts)" + SnapshotReplace;

    private const string SnapshotUpsertUtf8 = "INSERT INTO snapshots(silo_key, kind, json, updated_ms) VALUES($key, $kind, CAST($json AS TEXT), $ts)" + SnapshotReplace;

    private const string EventColumns =
        "site, silo, started_ms, ended_ms, mass_at_start_kg, mass_out_kg, mean_rate_kg_s, peak_rate_kg_s, max_asymmetry_ratio, asymmetry_direction_deg, details_json, max_a2_ratio, max_peak_over_mean, max_measured_over_expected, highest_priority, alarms_raised";

    private const string EventSelect = "SELECT id, " + EventColumns + " FROM events";

    private const string EventInsert = "INSERT INTO events(" + EventColumns + ") VALUES($site, $silo, $start, $end, $m0, $out, $mean, $peak, $asym, $dir, $details, $a2, $pom, $moe, $prio, $raised)";

    private const string EventUpdate =
        "UPDATE events SET site=$site, silo=$silo, started_ms=$start, ended_ms=$end, mass_at_start_kg=$m0, mass_out_kg=$out, mean_rate_kg_s=$mean, peak_rate_kg_s=$peak, max_asymmetry_ratio=$asym, asymmetry_direction_deg=$dir, details_json=$details, max_a2_ratio=$a2, max_peak_over_mean=$pom, max_measured_over_expected=$moe, highest_priority=$prio, alarms_raised=$raised WHERE id=$id";

    private const string CaptureUpsert =
        "INSERT INTO event_captures(event_id, format, frames, channels, data) VALUES($id, $format, $frames, $channels, $data) ON CONFLICT(event_id) DO UPDATE SET format = excluded.format, frames = excluded.frames, channels = excluded.channels, data = excluded.data";

    private static DischargeEventRecord ReadEvent(SqliteDataReader r) => new()
    {
        Id = r.GetInt64(0),
        SiteId = r.GetString(1),
        SiloId = r.GetString(2),
        StartedMs = r.GetInt64(3),
        EndedMs = r.IsDBNull(4) ? null : r.GetInt64(4),
        MassAtStartKg = r.GetDouble(5),
        MassOutKg = r.GetDouble(6),
        MeanRateKgPerS = r.GetDouble(7),
        PeakRateKgPerS = r.GetDouble(8),
        MaxAsymmetryRatio = r.GetDouble(9),
        AsymmetryDirectionDeg = r.GetDouble(10),
        DetailsJson = r.GetString(11),
        MaxA2Ratio = NullableReal(r, 12),
        MaxPeakOverMean = NullableReal(r, 13),
        MaxMeasuredOverExpected = NullableReal(r, 14),
        HighestPriority = r.IsDBNull(15) ? null : r.GetInt32(15),
        AlarmsRaised = r.GetInt32(16),
    };

    private static (string, object?)[] EventParameters(DischargeEventRecord e) =>
    [
        ("$site", e.SiteId), ("$silo", e.SiloId), ("$start", e.StartedMs), ("$end", e.EndedMs), ("$m0", e.MassAtStartKg), ("$out", e.MassOutKg),
        ("$mean", e.MeanRateKgPerS), ("$peak", e.PeakRateKgPerS), ("$asym", e.MaxAsymmetryRatio), ("$dir", e.AsymmetryDirectionDeg), ("$details", e.DetailsJson),
        ("$a2", Real(e.MaxA2Ratio)), ("$pom", Real(e.MaxPeakOverMean)), ("$moe", Real(e.MaxMeasuredOverExpected)), ("$prio", e.HighestPriority), ("$raised", e.AlarmsRaised),
    ];

    // SQLite has no NaN: a missing number is stored as NULL and read back as NaN.
    private static object? Real(double v) => double.IsNaN(v) ? null : v;

    private static double NullableReal(SqliteDataReader r, int i) => r.IsDBNull(i) ? double.NaN : r.GetDouble(i);

    private void Migrate(int from)
    {
        if (from > SchemaVersion)
        {
            throw new InvalidOperationException(
                $"journal {Path}: schema version {from} is newer than this program's ({SchemaVersion}); use a newer SiloWatch or another file");
        }

        for (var v = from; v < SchemaVersion; v++)
        {
            // Each step and its version bump in one transaction: a crash leaves the old version intact.
            using var tx = _connection.BeginTransaction();
            using var command = _connection.CreateCommand();
            command.Transaction = tx;
            command.CommandText = JournalSchema.Migrations[v] + string.Create(CultureInfo.InvariantCulture, $"\nPRAGMA user_version = {v + 1};");
            command.ExecuteNonQuery();
            tx.Commit();
        }
    }

    private int UserVersion()
    {
        using var command = _connection.CreateCommand();
        command.CommandText = "PRAGMA user_version";
        return Convert.ToInt32(command.ExecuteScalar(), CultureInfo.InvariantCulture);
    }

    private void Execute(string sql)
    {
        using var command = _connection.CreateCommand();
        command.CommandText = sql;
        command.ExecuteNonQuery();
    }

    private long Insert(string sql, params (string Name, object? Value)[] parameters)
    {
        lock (_lock)
        {
            ObjectDisposedException.ThrowIf(_disposed, this);
            using var command = Command(sql + " RETURNING id", parameters);
            return (long)command.ExecuteScalar()!;
        }
    }

    private int NonQuery(string sql, (string Name, object? Value)[] parameters)
    {
        lock (_lock)
        {
            ObjectDisposedException.ThrowIf(_disposed, this);
            using var command = Command(sql, parameters);
            return command.ExecuteNonQuery();
        }
    }

    private List<T> Query<T>(string sql, Func<SqliteDataReader, T> read, params (string Name, object? Value)[] parameters)
    {
        lock (_lock)
        {
            ObjectDisposedException.ThrowIf(_disposed, this);
            using var command = Command(sql, parameters);
            using var reader = command.ExecuteReader();
            var result = new List<T>();
            while (reader.Read())
            {
                result.Add(read(reader));
            }

            return result;
        }
    }

    private SqliteCommand Command(string sql, (string Name, object? Value)[] parameters)
    {
        var command = _connection.CreateCommand();
        command.CommandText = sql;
        foreach (var (name, value) in parameters)
        {
            command.Parameters.AddWithValue(name, value ?? DBNull.Value);
        }

        return command;
    }

    [LoggerMessage(Level = LogLevel.Information, Message = "Journal {Path}: schema migrated from version {From} to {To}")]
    private static partial void LogMigrated(ILogger logger, string path, int from, int to);
}
