using System.Text.RegularExpressions;
using SiloWatch.Integration.Tests.Support;
using SiloWatch.Review;
using SiloWatch.Review.Tests.Support;
using SiloWatch.Storage;
using Xunit.Abstractions;

namespace SiloWatch.Integration.Tests;

/// <summary>
/// The simulator's eccentric discharge through a real Mosquitto and the running service, to the event
/// record in the journal, its report and the `silowatch events` command reading the same journal.
/// </summary>
public sealed partial class DischargeEventReviewTests(ITestOutputHelper output)
{
    private const string Site = "brackenford";

    // simulators/scenarios/eccentric-discharge.json: S1's flow channel is at 120 deg. The wall load rises beside
    // the channel and falls inside it (DOMAIN.md §2, p_hae = 2·p_hf − p_hce [M]), so the first harmonic of the load
    // rise points away from it, toward about 300 deg (as the wall alarm test finds too).
    private const double ChannelDeg = 120;
    private const double LoadRiseDeg = ChannelDeg + 180;

    [Fact]
    public async Task AnEccentricDischargeBecomesAFullEventRecordWhoseReportShowsTheAsymmetryAwayFromTheFlowChannel()
    {
        await using var broker = await MosquittoServer.StartOrNullAsync();
        if (broker is null)
        {
            return;
        }

        // The demo plant's A1/A0 limit (0.35) is a placeholder above this discharge's peak (about 0.13): 0.10 here,
        // so that the record also carries the alarm it raised.
        var plant = SimulatedPlant.PlantWithLimits(("S1", "AsymmetryRatioA1", 0.10));
        var instance = $"it-ev-{Guid.NewGuid():N}"[..16];
        await using var service = await ServiceUnderTest.StartAsync(broker.Port, instance,
            ("Decoder:MaxLateness", "00:00:00"), ("Evaluation:Clock", "Samples"), ("Instance:PlantFile", plant));
        DischargeEventRecord? finished = null;
        await using (SimulatedPlant.Start(broker.Port, "eccentric-discharge.json", speed: 100, plantPath: plant))
        {
            // 90 t at 50 kg/s from minute 10, then two minutes of settling: about 43 simulated minutes.
            await TestMqtt.WaitForAsync(() => (finished = service.Journal.QueryEvents(new EventQuery(Site, "S1", FinishedOnly: true)).FirstOrDefault(e => e.MassOutKg > 50_000)) is not null,
                "the discharge event of S1 closed in the journal", TimeSpan.FromSeconds(150));
        }

        var e = ReviewedEvent.Load(service.Journal, finished!.Id);
        foreach (var (label, value) in e.Summary())
        {
            output.WriteLine($"{label,-24} {value}");
        }

        // The headline: the scenario takes 90 t out at 50 kg/s (180 t/h).
        var r = e.Record;
        Assert.InRange(r.MassOutKg, 80_000, 100_000);
        Assert.InRange(r.MeanRateKgPerS, 40, 60);
        Assert.InRange(r.PeakRateKgPerS, r.MeanRateKgPerS, 80);
        Assert.InRange((r.EndedMs!.Value - r.StartedMs) / 1000.0, 1600, 2000);
        Assert.True(r.MaxAsymmetryRatio >= 0.10, $"peak A1/A0 {r.MaxAsymmetryRatio}");
        Assert.True(PlotPixels.AngleBetween(r.AsymmetryDirectionDeg, LoadRiseDeg) <= 40, $"direction {r.AsymmetryDirectionDeg:0} deg, the load should rise opposite the channel at {ChannelDeg} deg");

        // The alarms raised during it, from the alarm journal.
        var d = e.Details!;
        var alarm = Assert.Single(d.Alarms, a => a.Alarm.StartsWith($"{Site}/S1/asymmetry-a1-", StringComparison.Ordinal));
        Assert.InRange(alarm.RaisedMs, r.StartedMs, r.EndedMs.Value);
        Assert.True(alarm.ValueWhenRaised >= alarm.Setpoint);
        Assert.Equal(alarm.Priority, r.HighestPriority);
        Assert.Equal(d.Alarms.Count, r.AlarmsRaised);

        // Per ring: loads against the expected ones with the discharge factors used, and the pattern at the peak.
        Assert.Equal(1.15, d.Factors.HorizontalCh); // the mechanics library's default C_h (EN 1991-4 §5.2.2 [M?])
        Assert.Equal(1.10, d.Factors.FrictionCw);
        Assert.All(d.Rings, ring =>
        {
            Assert.NotNull(ring.PeakForceKnPerM);
            Assert.True(ring.ExpectedForceAtPeakKnPerM > 0, $"ring {ring.Ring}: expected {ring.ExpectedForceAtPeakKnPerM}");
            Assert.NotNull(ring.MaxMeasuredOverExpected);
            Assert.NotNull(ring.PatternAtMaxA1);
            Assert.Equal(ring.Gauges, ring.PatternAtMaxA1!.GaugeChanges.Count);
        });
        Assert.Contains(d.Rings, ring => ring.Kind == "axial");
        Assert.Contains(d.Rings, ring => ring.Kind == "hoop");
        Assert.True(d.ExpectedProfile.Count > 10);
        Assert.True(d.Quality.Readings > 1000 && d.Quality.GoodShare > 0.5, $"{d.Quality.Readings} readings, {d.Quality.GoodShare:P0} good");

        // The capture: from a minute before the onset to a minute after the end, every gauge and ring.
        var capture = e.Capture!;
        Assert.InRange(capture.Frames[0].TimestampMs, r.StartedMs - 61_000, r.StartedMs - 50_000);
        Assert.InRange(capture.Frames[^1].TimestampMs, r.EndedMs.Value + 50_000, r.EndedMs.Value + 61_000);
        var mass = capture.Column(capture.IndexOf("mass_kg"));
        Assert.InRange(mass.First(double.IsFinite) - mass.Last(double.IsFinite), 80_000, 100_000);
        Assert.Equal(d.Rings.Sum(x => x.Gauges), capture.Channels.Count(c => c.Kind == CaptureChannelKind.Strain));
        Assert.Equal(d.Rings.Count, capture.Channels.Count(c => c.Kind == CaptureChannelKind.RingA1Ratio));
        Assert.Contains(capture.Channels, c => c.Kind == CaptureChannelKind.Temperature);
        output.WriteLine($"capture: {capture.Frames.Count} frames x {capture.Channels.Count} channels, {service.Journal.CaptureBytes(r.Id)} bytes stored");

        // The report shows the asymmetry: the peak ring's polar plot points where the event says, away from the channel.
        var html = HtmlReport.Render(e);
        var peak = PeakFigure().Match(html);
        Assert.True(peak.Success, "the report has the peak ring's pattern plot");
        using (var image = PlotPixels.FromDataUri(peak.Groups["src"].Value))
        {
            var drawn = image.ArrowDirectionDeg();
            output.WriteLine($"ring {peak.Groups["ring"].Value}: arrow drawn toward {drawn:0.0} deg, event {r.AsymmetryDirectionDeg:0.0} deg");
            Assert.True(PlotPixels.AngleBetween(drawn, r.AsymmetryDirectionDeg) <= 3, $"arrow {drawn:0.0} deg, event {r.AsymmetryDirectionDeg:0.0} deg");
            Assert.True(PlotPixels.AngleBetween(drawn, LoadRiseDeg) <= 40, $"arrow {drawn:0.0} deg, ground truth {LoadRiseDeg} deg");
        }

        Assert.Contains(alarm.Alarm, html, StringComparison.Ordinal);

        // The command reads the same journal while the service still has it open.
        var work = Directory.CreateTempSubdirectory("silowatch-cli-").FullName;
        var journal = service.Journal.Path;
        var list = await CliProcess.RunAsync(work, "events", "list", "--journal", journal, "--silo", $"{Site}/S1", "--priority", "4");
        output.WriteLine(list.StandardOutput);
        Assert.Equal(0, list.ExitCode);
        Assert.Matches($@"(?m)^\s+{r.Id}\s+{Site}/S1\s", list.StandardOutput);

        var show = await CliProcess.RunAsync(work, "events", "show", r.Id.ToString(System.Globalization.CultureInfo.InvariantCulture), "--journal", journal);
        output.WriteLine(show.StandardOutput);
        Assert.Equal(0, show.ExitCode);
        Assert.Contains("peak A1/A0", show.StandardOutput, StringComparison.Ordinal);
        Assert.Contains("licensed structural engineer", show.StandardOutput, StringComparison.Ordinal);

        var csv = await CliProcess.RunAsync(work, "events", "export", r.Id.ToString(System.Globalization.CultureInfo.InvariantCulture), "--journal", journal);
        Assert.Equal(0, csv.ExitCode);
        var lines = csv.StandardOutput.Split('\n', StringSplitOptions.RemoveEmptyEntries);
        Assert.StartsWith("time_utc,seconds_from_first,mass_kg [kg]", lines[0], StringComparison.Ordinal);
        Assert.Equal(capture.Frames.Count + 1, lines.Length); // progress went to stderr, not into the CSV
        Assert.Contains("frames", csv.StandardError, StringComparison.Ordinal);

        var report = await CliProcess.RunAsync(work, "events", "report", r.Id.ToString(System.Globalization.CultureInfo.InvariantCulture), "--journal", journal, "-o", "event.html");
        Assert.Equal(0, report.ExitCode);
        Assert.Contains("data:image/png;base64,", await File.ReadAllTextAsync(Path.Combine(work, "event.html")), StringComparison.Ordinal);

        var missing = await CliProcess.RunAsync(work, "events", "show", "999999", "--journal", journal);
        Assert.Equal(1, missing.ExitCode);
        Assert.Contains("has no discharge event 999999", missing.StandardError, StringComparison.Ordinal);
        var noJournal = await CliProcess.RunAsync(work, "events", "list", "--journal", Path.Combine(work, "none.db"));
        Assert.Equal(2, noJournal.ExitCode);
        Assert.Contains("no journal at", noJournal.StandardError, StringComparison.Ordinal);
        Assert.False(File.Exists(Path.Combine(work, "none.db")));
    }

    [GeneratedRegex("<figure id=\"plot-ring-pattern-(?<ring>[^\"]+)\" data-direction-deg=\"[^\"]+\" data-peak=\"true\">.*?<img [^>]*src=\"(?<src>[^\"]+)\"", RegexOptions.Singleline)]
    private static partial Regex PeakFigure();
}
