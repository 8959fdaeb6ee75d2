using Microsoft.Data.Sqlite;

namespace SiloWatch.Storage;

/// <summary>One series field of the embedded store.</summary>
public sealed record StoredSeries(string Measurement, IReadOnlyList<KeyValuePair<string, string>> Tags, string Field);

/// <summary>
/// Reads the embedded time-series file from another process (export and review tools) while the
/// service writes it: the file is opened read-only, and WAL mode lets readers and the writer
/// proceed side by side.
/// </summary>
public sealed class EmbeddedSeriesReader : IDisposable
{
    private readonly SqliteConnection _connection;

    /// <exception cref="FileNotFoundException">There is no embedded store at that path.</exception>
    public EmbeddedSeriesReader(string path)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(path);
        if (!File.Exists(path))
        {
            throw new FileNotFoundException($"no embedded time-series store at {path}", path);
        }

        _connection = new SqliteConnection(new SqliteConnectionStringBuilder { DataSource = path, Mode = SqliteOpenMode.ReadOnly, Pooling = false }.ToString());
        _connection.Open();
    }

    /// <summary>Every series field stored, optionally of one measurement, ordered by measurement, tags, field.</summary>
    public IReadOnlyList<StoredSeries> ListSeries(string? measurement = null)
    {
        using var command = _connection.CreateCommand();
        command.CommandText = "SELECT measurement, tags, field FROM series WHERE $m IS NULL OR measurement = $m ORDER BY measurement, tags, field";
        command.Parameters.AddWithValue("$m", (object?)measurement ?? DBNull.Value);
        using var reader = command.ExecuteReader();
        var result = new List<StoredSeries>();
        while (reader.Read())
        {
            result.Add(new StoredSeries(reader.GetString(0), TagSetParser.Parse(reader.GetString(1)), reader.GetString(2)));
        }

        return result;
    }

    /// <summary>
    /// Samples of one field of a measurement in [<paramref name="fromMs"/>, <paramref name="toMs"/>),
    /// ordered by series then time; every tag in <paramref name="tags"/> (optional) must match.
    /// </summary>
    public IReadOnlyList<StoredSample> Query(string measurement, string field, IEnumerable<KeyValuePair<string, string>>? tags, long fromMs, long toMs) =>
        Query(_connection, measurement, field, tags, fromMs, toMs);

    public void Dispose() => _connection.Dispose();

    internal static List<StoredSample> Query(SqliteConnection connection, string measurement, string field, IEnumerable<KeyValuePair<string, string>>? tags, long fromMs, long toMs)
    {
        var wanted = tags?.ToList() ?? [];
        var series = new List<(long Id, string Tags)>();
        using (var find = connection.CreateCommand())
        {
            find.CommandText = "SELECT id, tags FROM series WHERE measurement = $m AND field = $f ORDER BY tags";
            find.Parameters.AddWithValue("$m", measurement);
            find.Parameters.AddWithValue("$f", field);
            using var reader = find.ExecuteReader();
            while (reader.Read())
            {
                var tagSet = reader.GetString(1);
                var parsed = TagSetParser.Parse(tagSet);
                if (wanted.All(parsed.Contains))
                {
                    series.Add((reader.GetInt64(0), tagSet));
                }
            }
        }

        var result = new List<StoredSample>();
        using var read = connection.CreateCommand();
        read.CommandText = "SELECT ts_ms, value FROM samples WHERE series_id = $s AND ts_ms >= $from AND ts_ms < $to ORDER BY ts_ms";
        var pSeries = read.Parameters.Add("$s", SqliteType.Integer);
        read.Parameters.AddWithValue("$from", fromMs);
        read.Parameters.AddWithValue("$to", toMs);
        foreach (var (id, tagSet) in series)
        {
            pSeries.Value = id;
            using var reader = read.ExecuteReader();
            while (reader.Read())
            {
                result.Add(new StoredSample(measurement, tagSet, field, reader.GetInt64(0), reader.GetDouble(1)));
            }
        }

        return result;
    }
}
