using Microsoft.Data.Sqlite;
using Microsoft.Extensions.Time.Testing;
using SiloWatch.Storage.Tests.Support;

namespace SiloWatch.Storage.Tests;

/// <summary>Discharge event records of schema version 4: severity columns, filters, details and the stored capture.</summary>
public sealed class JournalEventRecordsTests : IDisposable
{
    private readonly TempDirectory _dir = new();
    private readonly FakeTimeProvider _time = new(DateTimeOffset.Parse("2026-05-04T06:00:00Z", System.Globalization.CultureInfo.InvariantCulture));

    public void Dispose() => _dir.Dispose();

    private string DbPath => _dir.File("journal.db");

    [Fact]
    public void AVersionThreeJournalIsMigratedKeepingItsEventsWithTheNewNumbersUnknown()
    {
        using (var c = new SqliteConnection(new SqliteConnectionStringBuilder { DataSource = DbPath, Pooling = false }.ToString()))
        {
            c.Open();
            using var cmd = c.CreateCommand();
            cmd.CommandText = string.Join('\n', JournalSchema.Migrations.Take(3)) + """
                PRAGMA user_version = 3;
                INSERT INTO events(site, silo, started_ms, ended_ms, mass_at_start_kg, mass_out_kg, mean_rate_kg_s, peak_rate_kg_s, max_asymmetry_ratio, asymmetry_direction_deg, details_json)
                    VALUES('brackenford', 'S1', 1000, 61000, 250000, 12000, 200, 260, 0.21, 301, '{"type":"discharge","rings":[]}');
                """;
            cmd.ExecuteNonQuery();
        }

        using var journal = new Journal(DbPath, _time);
        var ev = Assert.Single(journal.QueryEvents("brackenford", "S1", 0, long.MaxValue));
        Assert.Equal(0.21, ev.MaxAsymmetryRatio);
        Assert.True(double.IsNaN(ev.MaxA2Ratio));
        Assert.True(double.IsNaN(ev.MaxMeasuredOverExpected));
        Assert.Null(ev.HighestPriority);
        Assert.Equal(0, ev.AlarmsRaised);
        Assert.Null(DischargeEventDetails.FromJson(ev.DetailsJson)); // the old summary is not a details document
        Assert.Null(journal.LoadCapture(ev.Id));
        Assert.Equal(4, Journal.SchemaVersion);
    }

    [Fact]
    public void TheFiltersSelectBySiloTimeAlarmPriorityAndPeakAsymmetry()
    {
        using var journal = new Journal(DbPath, _time);
        journal.AppendEvent(new DischargeEventRecord { SiteId = "brackenford", SiloId = "S1", StartedMs = 1_000, EndedMs = 2_000, MaxAsymmetryRatio = 0.05 });
        journal.AppendEvent(new DischargeEventRecord { SiteId = "brackenford", SiloId = "S1", StartedMs = 5_000, EndedMs = 9_000, MaxAsymmetryRatio = 0.4, HighestPriority = 2, AlarmsRaised = 3 });
        journal.AppendEvent(new DischargeEventRecord { SiteId = "brackenford", SiloId = "S2", StartedMs = 6_000, EndedMs = 7_000, MaxAsymmetryRatio = 0.2, HighestPriority = 3, AlarmsRaised = 1 });
        journal.AppendEvent(new DischargeEventRecord { SiteId = "brackenford", SiloId = "C1", StartedMs = 8_000 });

        Assert.Equal([5_000L, 6_000L], journal.QueryEvents(new EventQuery(HighestPriorityAtMost: 3)).Select(e => e.StartedMs));
        Assert.Equal([5_000L], journal.QueryEvents(new EventQuery(HighestPriorityAtMost: 2)).Select(e => e.StartedMs));
        Assert.Equal([5_000L, 6_000L], journal.QueryEvents(new EventQuery(MinAsymmetryRatio: 0.2)).Select(e => e.StartedMs));
        Assert.Equal([1_000L, 5_000L], journal.QueryEvents(new EventQuery("brackenford", "S1")).Select(e => e.StartedMs));
        Assert.Equal([5_000L, 6_000L, 8_000L], journal.QueryEvents(new EventQuery(FromMs: 6_500, ToMs: 10_000)).Select(e => e.StartedMs));
        Assert.Equal([1_000L, 5_000L, 6_000L], journal.QueryEvents(new EventQuery(FinishedOnly: true)).Select(e => e.StartedMs));
        var flagged = journal.QueryEvents(new EventQuery(SiloId: "S1", HighestPriorityAtMost: 4)).Single();
        Assert.Equal(3, flagged.AlarmsRaised);
    }

    [Fact]
    public void AnEventKeepsItsSeverityNumbersItsDetailsAndItsCapture()
    {
        using var journal = new Journal(DbPath, _time);
        var details = new DischargeEventDetails(DischargeEventDetails.CurrentFormat, "silowatch-0", "Wheat silo 1", "wheat", 300_000, 600, 0, 700_000,
            new DischargeFactors(1.15, 1.1, "test"), [], [], new EventDataQuality(10, 1, 0, 0, 1, 0, 0, []), [], []);
        var id = journal.AppendEvent(new DischargeEventRecord
        {
            SiteId = "brackenford", SiloId = "S1", StartedMs = 60_000, EndedMs = 660_000, MaxA2Ratio = 0.03, MaxPeakOverMean = 1.2, MaxMeasuredOverExpected = 0.9,
            DetailsJson = details.ToJson(),
        });
        var capture = new EventCapture("brackenford", "S1", 1000, 0, [new CaptureChannel("mass_kg", CaptureChannelKind.Mass, "kg")],
            [.. Enumerable.Range(0, 700).Select(i => new CaptureFrame(i * 1000L, [400_000f - i]))]);
        journal.SaveCapture(id, capture);

        var back = journal.GetEvent(id)!;
        Assert.Equal(0.03, back.MaxA2Ratio);
        Assert.Equal(1.2, back.MaxPeakOverMean);
        Assert.Equal(0.9, back.MaxMeasuredOverExpected);
        Assert.Equal(details.ToJson(), DischargeEventDetails.FromJson(back.DetailsJson)!.ToJson());
        var stored = journal.LoadCapture(id)!;
        Assert.Equal(700, stored.Frames.Count);
        Assert.Equal(399_301f, stored.Frames[^1].Values[0]);
        Assert.InRange(journal.CaptureBytes(id), 100, 700 * 8);
        Assert.Throws<KeyNotFoundException>(() => journal.SaveCapture(id + 100, capture));
    }

    [Fact]
    public void CompletingAnEventRewritesItsRowWithItsCaptureOrAddsItWhenTheRowIsGone()
    {
        using var journal = new Journal(DbPath, _time);
        var open = journal.AppendEvent(new DischargeEventRecord { SiteId = "brackenford", SiloId = "S1", StartedMs = 1_000 });
        var capture = new EventCapture("brackenford", "S1", 1000, 0, [new CaptureChannel("mass_kg", CaptureChannelKind.Mass, "kg")],
            [new CaptureFrame(0, [5f]), new CaptureFrame(1000, [4f])]);

        var id = journal.CompleteEvent(new DischargeEventRecord { Id = open, SiteId = "brackenford", SiloId = "S1", StartedMs = 1_000, EndedMs = 9_000, MassOutKg = 1 }, capture);
        Assert.Equal(open, id);
        Assert.Equal(9_000, journal.GetEvent(id)!.EndedMs);
        Assert.Equal(2, journal.LoadCapture(id)!.Frames.Count);

        var added = journal.CompleteEvent(new DischargeEventRecord { Id = 999, SiteId = "brackenford", SiloId = "S2", StartedMs = 2_000, EndedMs = 3_000 }, null);
        Assert.NotEqual(999, added);
        Assert.Equal("S2", journal.GetEvent(added)!.SiloId);
        Assert.Null(journal.LoadCapture(added));
        Assert.Equal(2, journal.QueryEvents(new EventQuery(FinishedOnly: true)).Count);
    }

    [Fact]
    public void OpeningAMissingJournalForReviewFailsInsteadOfCreatingOne()
    {
        var missing = _dir.File("nothing-here.db");
        var ex = Assert.Throws<FileNotFoundException>(() => Journal.OpenExisting(missing, _time));
        Assert.Contains("no journal at", ex.Message, StringComparison.Ordinal);
        Assert.False(File.Exists(missing));
    }
}
