using Microsoft.Data.Sqlite;
using Microsoft.Extensions.Time.Testing;
using SiloWatch.Storage.Tests.Support;

namespace SiloWatch.Storage.Tests;

public sealed class JournalTests : IDisposable
{
    private readonly TempDirectory _dir = new();
    private readonly FakeTimeProvider _time = new(DateTimeOffset.Parse("2026-05-04T06:00:00Z", System.Globalization.CultureInfo.InvariantCulture));

    public void Dispose() => _dir.Dispose();

    private string DbPath => _dir.File("journal.db");

    private Journal Open() => new(DbPath, _time);

    private static SqliteConnection Raw(string path)
    {
        var c = new SqliteConnection(new SqliteConnectionStringBuilder { DataSource = path, Pooling = false }.ToString());
        c.Open();
        return c;
    }

    private static object? Scalar(SqliteConnection c, string sql)
    {
        using var cmd = c.CreateCommand();
        cmd.CommandText = sql;
        return cmd.ExecuteScalar();
    }

    [Fact]
    public void ANewJournalIsInWalModeAtTheCurrentSchemaVersion()
    {
        using (Open())
        {
        }

        using var c = Raw(DbPath);
        Assert.Equal((long)Journal.SchemaVersion, Scalar(c, "PRAGMA user_version"));
        Assert.Equal("wal", Scalar(c, "PRAGMA journal_mode"));
        Assert.True(Journal.SchemaVersion >= 3);
    }

    [Fact]
    public void AJournalWrittenBySchemaVersionOneIsMigratedKeepingItsRecords()
    {
        using (var c = Raw(DbPath))
        {
            using var cmd = c.CreateCommand();
            cmd.CommandText = JournalSchema.Migrations[0] + """
                PRAGMA user_version = 1;
                INSERT INTO events(site, silo, started_ms, ended_ms, mass_at_start_kg, mass_out_kg, mean_rate_kg_s, peak_rate_kg_s)
                    VALUES('brackenford', 'S1', 1000, 61000, 250000, 12000, 200, 260);
                INSERT INTO alarm_transitions(ts_ms, site, silo, alarm, from_state, to_state, priority, value, limit_value, message, user)
                    VALUES(5000, 'brackenford', 'S1', 'overfill', 'Normal', 'Unacknowledged', 1, 96.5, 95, 'overfill', NULL);
                """;
            cmd.ExecuteNonQuery();
        }

        using var journal = Open();

        var ev = Assert.Single(journal.QueryEvents("brackenford", "S1", 0, long.MaxValue));
        Assert.Equal(12000, ev.MassOutKg);
        Assert.Equal(61000, ev.EndedMs);
        Assert.Equal("{}", ev.DetailsJson); // column added by migration 3, default kept
        Assert.Equal(0, ev.MaxAsymmetryRatio);
        var alarm = Assert.Single(journal.QueryAlarmHistory("brackenford", "S1", 0, long.MaxValue));
        Assert.Equal(96.5, alarm.Value);
        journal.SaveSnapshot("brackenford/S1", "tare", "{}"); // table from migration 2
        using var raw = Raw(DbPath);
        Assert.Equal((long)Journal.SchemaVersion, Scalar(raw, "PRAGMA user_version"));
    }

    [Fact]
    public void AJournalFromANewerProgramIsRefusedWithTheVersionNamed()
    {
        using (var c = Raw(DbPath))
        {
            Scalar(c, "PRAGMA user_version = 99");
        }

        var ex = Assert.Throws<InvalidOperationException>(Open);
        Assert.Contains("99", ex.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void ASnapshotSurvivesARestartAndSavingAgainReplacesIt()
    {
        const string tare = """{"tareKg":38125.5,"at":"2026-05-04T05:00:00Z"}""";
        using (var journal = Open())
        {
            journal.SaveSnapshot("brackenford/S1", "tare", """{"tareKg":1}""");
            _time.Advance(TimeSpan.FromMinutes(5));
            journal.SaveSnapshot("brackenford/S1", "tare", tare);
            journal.SaveSnapshot("brackenford/S2", "tare", "{}");
            journal.SaveSnapshot("brackenford/S1", "alarms", "[]");
        }

        using var reopened = Open();
        Assert.Equal(tare, reopened.LoadSnapshot("brackenford/S1", "tare"));
        Assert.Equal("[]", reopened.LoadSnapshot("brackenford/S1", "alarms"));
        Assert.Null(reopened.LoadSnapshot("brackenford/C1", "tare"));
        var all = reopened.LoadSnapshots("tare");
        Assert.Equal(["brackenford/S1", "brackenford/S2"], all.Select(s => s.SiloKey));
        Assert.Equal(_time.GetUtcNow().ToUnixTimeMilliseconds(), all[0].UpdatedMs);
        Assert.True(reopened.DeleteSnapshot("brackenford/S2", "tare"));
        Assert.Single(reopened.LoadSnapshots("tare"));
    }

    [Fact]
    public void SnapshotsSavedTogetherAreAllStoredOrNoneIs()
    {
        using (var journal = Open())
        {
            journal.SaveSnapshot("brackenford/S1", "ingest-checkpoint", "{\"v\":0}");
            journal.SaveSnapshots([("brackenford/S1", "ingest-checkpoint", "{\"v\":1}"u8.ToArray()), ("brackenford/S2", "ingest-checkpoint", "{\"v\":\"2 \u00b5m\"}"u8.ToArray())]);

            // One bad entry: nothing of the batch is written, the earlier snapshots stay.
            Assert.Throws<ArgumentException>(() => journal.SaveSnapshots([("brackenford/S1", "ingest-checkpoint", "{\"v\":9}"u8.ToArray()), ("", "ingest-checkpoint", "{}"u8.ToArray())]));
        }

        using (var reopened = Open())
        {
            Assert.Equal("{\"v\":1}", reopened.LoadSnapshot("brackenford/S1", "ingest-checkpoint"));
            Assert.Equal("{\"v\":\"2 \u00b5m\"}", reopened.LoadSnapshot("brackenford/S2", "ingest-checkpoint")); // UTF-8 beyond ASCII read back as written
            Assert.Equal(2, reopened.LoadSnapshots("ingest-checkpoint").Count);
        }

        // Saved from UTF-8 bytes, stored as text like every other snapshot (not as a blob).
        using var c = Raw(DbPath);
        Assert.Equal("text", Scalar(c, "SELECT group_concat(DISTINCT typeof(json)) FROM snapshots"));
    }

    [Fact]
    public void AnEventInProgressIsFoundAfterARestartAndClosedByAnUpdate()
    {
        long id;
        using (var journal = Open())
        {
            id = journal.AppendEvent(new DischargeEventRecord { SiteId = "brackenford", SiloId = "S1", StartedMs = 10_000, MassAtStartKg = 300_000 });
        }

        using var reopened = Open();
        var open = reopened.FindOpenEvent("brackenford", "S1");
        Assert.NotNull(open);
        Assert.Equal(id, open.Id);
        Assert.True(open.InProgress);

        reopened.UpdateEvent(open with { EndedMs = 70_000, MassOutKg = 15_000, MeanRateKgPerS = 250, PeakRateKgPerS = 310, MaxAsymmetryRatio = 0.4, AsymmetryDirectionDeg = 135, DetailsJson = """{"rings":2}""" });

        Assert.Null(reopened.FindOpenEvent("brackenford", "S1"));
        var closed = reopened.GetEvent(id)!;
        Assert.Equal(70_000, closed.EndedMs);
        Assert.Equal(135, closed.AsymmetryDirectionDeg);
        Assert.Equal("""{"rings":2}""", closed.DetailsJson);
        Assert.Throws<KeyNotFoundException>(() => reopened.UpdateEvent(closed with { Id = 999 }));
    }

    [Fact]
    public void EventQueriesSelectBySiteSiloAndOverlapWithTheTimeRange()
    {
        using var journal = Open();
        journal.AppendEvent(new DischargeEventRecord { SiteId = "brackenford", SiloId = "S1", StartedMs = 1_000, EndedMs = 2_000 });
        journal.AppendEvent(new DischargeEventRecord { SiteId = "brackenford", SiloId = "S1", StartedMs = 5_000, EndedMs = 9_000 });
        journal.AppendEvent(new DischargeEventRecord { SiteId = "brackenford", SiloId = "S2", StartedMs = 6_000, EndedMs = 7_000 });
        journal.AppendEvent(new DischargeEventRecord { SiteId = "other", SiloId = "S1", StartedMs = 6_000 });

        Assert.Equal([5_000L], journal.QueryEvents("brackenford", "S1", 3_000, 6_000).Select(e => e.StartedMs));
        Assert.Equal([5_000L, 6_000L], journal.QueryEvents("brackenford", null, 8_500, 10_000).Select(e => e.StartedMs).Concat(journal.QueryEvents("brackenford", "S2", 0, 10_000).Select(e => e.StartedMs)));
        Assert.Equal(3, journal.QueryEvents(null, null, 5_500, 100_000).Count); // the open event overlaps any later range
    }

    [Fact]
    public void AlarmHistoryIsFilteredBySiloAndTimeAndKeepsMissingNumbersAsNaN()
    {
        using var journal = Open();
        journal.AppendAlarmTransition(new(1_000, "brackenford", "S1", "overfill", "Normal", "Unacknowledged", 1, 96, 95, "Overfill 96 %"));
        journal.AppendAlarmTransition(new(2_000, "brackenford", "S1", "overfill", "Unacknowledged", "Acknowledged", 1, double.NaN, 95, "ack", "op1"));
        journal.AppendAlarmTransition(new(2_500, "brackenford", "S2", "gauge-dead", "Normal", "Unacknowledged", 2, double.NaN, double.NaN, "dead gauge"));

        var s1 = journal.QueryAlarmHistory("brackenford", "S1", 0, 10_000);
        Assert.Equal(["Unacknowledged", "Acknowledged"], s1.Select(a => a.ToState));
        Assert.True(double.IsNaN(s1[1].Value));
        Assert.Equal("op1", s1[1].User);
        Assert.Single(journal.QueryAlarmHistory(null, null, 2_100, 3_000));
    }

    [Fact]
    public void CalibrationsAndTaresAreKeptInOrder()
    {
        using var journal = Open();
        journal.AppendCalibration(new(1_000, "brackenford", "S1", "LC1", "SpanFactor", 1.0, 1.012, "reference weights", "eng1", "annual"));
        journal.AppendTare(new(2_000, "brackenford", "S1", 38_125, 38_000, "op1", "empty after cleaning"));
        journal.AppendTare(new(3_000, "brackenford", "S1", 38_130, 38_125));

        var cal = Assert.Single(journal.QueryCalibrations("brackenford", "S1", 0, 10_000));
        Assert.Equal(1.012, cal.NewValue);
        Assert.Equal([38_125.0, 38_130.0], journal.QueryTares("brackenford", "S1", 0, 10_000).Select(t => t.TareKg));
    }
}
