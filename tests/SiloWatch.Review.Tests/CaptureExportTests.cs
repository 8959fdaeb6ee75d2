using System.Text;
using System.Text.Json;
using SiloWatch.Review.Tests.Support;

namespace SiloWatch.Review.Tests;

public sealed class CaptureExportTests
{
    [Fact]
    public void TheCsvReadsBackToTheSameChannelsTimesAndValuesWithUnknownsEmpty()
    {
        var capture = SomeEvents.Eccentric().Capture!;
        var progress = new List<int>();
        var text = new StringWriter();
        CaptureExport.WriteCsv(capture, text, new SyncProgress(progress));

        var lines = text.ToString().Split('\n', StringSplitOptions.RemoveEmptyEntries);
        Assert.Equal(capture.Frames.Count + 1, lines.Length);
        Assert.StartsWith("time_utc,seconds_from_first,mass_kg [kg],rate_kg_s [kg/s],strain_micro:R1-000 [microstrain]", lines[0], StringComparison.Ordinal);
        Assert.StartsWith("2026-03-10T20:59:00.000Z,0,", lines[1], StringComparison.Ordinal);
        Assert.Contains(",,", lines[1], StringComparison.Ordinal); // A1/A0 unknown before the flow: an empty cell

        var (names, frames) = CaptureExport.ReadCsv(new StringReader(text.ToString()));
        Assert.Equal(capture.Channels.Select(c => c.Name), names);
        Assert.Equal(capture.Frames.Select(f => f.TimestampMs), frames.Select(f => f.TimestampMs));
        for (var i = 0; i < frames.Count; i++)
        {
            Assert.Equal(capture.Frames[i].Values, frames[i].Values);
        }

        Assert.Equal(capture.Frames.Count, progress[^1]);
        Assert.True(progress.Count > 3, "progress is reported along the way");
    }

    [Fact]
    public void TheJsonCarriesTheRecordTheDetailsAndEveryFrame()
    {
        var e = SomeEvents.Eccentric(directionDeg: 123);
        using var stream = new MemoryStream();
        CaptureExport.WriteJson(e, stream);
        using var doc = JsonDocument.Parse(stream.ToArray());
        var root = doc.RootElement;
        Assert.Equal(7, root.GetProperty("event").GetProperty("id").GetInt64());
        Assert.Equal(123, root.GetProperty("event").GetProperty("directionDeg").GetDouble());
        Assert.Equal(2, root.GetProperty("event").GetProperty("highestPriority").GetInt32());
        Assert.Equal(123, root.GetProperty("details").GetProperty("rings")[0].GetProperty("patternAtMaxA1").GetProperty("directionDeg").GetDouble());
        var frames = root.GetProperty("capture").GetProperty("frames");
        Assert.Equal(e.Capture!.Frames.Count, frames.GetArrayLength());
        Assert.Equal(e.Capture.Channels.Count + 1, frames[0].GetArrayLength());
        Assert.Equal(JsonValueKind.Null, frames[0][e.Capture.IndexOf("a1_ratio:R1") + 1].ValueKind);
        Assert.Contains("licensed structural engineer", root.GetProperty("caution").GetString(), StringComparison.Ordinal);

        // The details document read back equals what was written.
        var details = root.GetProperty("details").Deserialize<SiloWatch.Storage.DischargeEventDetails>(SiloWatch.Storage.DischargeEventDetails.Json)!;
        Assert.Equal(e.Details!.ToJson(), details.ToJson());
    }

    private sealed class SyncProgress(List<int> seen) : IProgress<int>
    {
        public void Report(int value) => seen.Add(value);
    }
}
