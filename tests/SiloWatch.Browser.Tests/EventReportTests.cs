using Microsoft.Extensions.DependencyInjection;
using Microsoft.Playwright;
using SiloWatch.Browser.Tests.Support;
using SiloWatch.Review;
using SiloWatch.Review.Tests.Support;
using SiloWatch.Storage;
using Xunit.Abstractions;

namespace SiloWatch.Browser.Tests;

/// <summary>
/// The review report of a real (simulated) eccentric discharge, recorded by the running service and
/// opened from its file in headless Chromium: every plot loads, the caution shows, and a screenshot
/// is taken for the README.
/// </summary>
public sealed class EventReportTests(ITestOutputHelper output)
{
    [Fact]
    public async Task TheReportOfAnEccentricDischargeOpensInABrowserWithEveryPlotLoadedAndTheCautionShown()
    {
        var chromium = HeadlessChromium.Locate();
        if (chromium is null)
        {
            return;
        }

        // The A1/A0 limit of S1 lowered to 0.10 (the demo's 0.35 is a placeholder): the report then lists the alarm raised.
        var plant = LiveService.PlantWithLimit("S1", "AsymmetryRatioA1", 0.10);
        ReviewedEvent e;
        await using (var service = await LiveService.StartAsync("eccentric-discharge.json", speed: 100, plant))
        {
            var journal = service.Services.GetRequiredService<Journal>();
            var deadline = DateTime.UtcNow + TimeSpan.FromSeconds(150);
            DischargeEventRecord? finished;
            while ((finished = journal.QueryEvents(new EventQuery("brackenford", "S1", FinishedOnly: true)).FirstOrDefault()) is null)
            {
                Assert.True(DateTime.UtcNow < deadline, "timed out waiting for the discharge event of S1 to close");
                await Task.Delay(250);
            }

            e = ReviewedEvent.Load(journal, finished.Id);
        }

        var folder = Directory.CreateTempSubdirectory("silowatch-report-").FullName;
        var file = Path.Combine(folder, $"event-{e.Record.Id}.html");
        await File.WriteAllTextAsync(file, HtmlReport.Render(e));

        using var playwright = await Playwright.CreateAsync();
        await using var browser = await HeadlessChromium.LaunchAsync(playwright, chromium);
        var page = await browser.NewPageAsync(new() { ViewportSize = new() { Width = 1100, Height = 900 } });
        var errors = new List<string>();
        var requests = new List<string>();
        page.PageError += (_, x) => errors.Add(x);
        page.Request += (_, r) => requests.Add(r.Url);
        await page.GotoAsync(new Uri(file).AbsoluteUri);

        await Assertions.Expect(page.Locator("h1")).ToContainTextAsync($"Discharge event {e.Record.Id}, brackenford/S1");
        await Assertions.Expect(page.Locator("#caution")).ToContainTextAsync("licensed structural engineer");
        await Assertions.Expect(page.Locator("#caution")).ToBeVisibleAsync();
        await Assertions.Expect(page.Locator("#alarms")).ToContainTextAsync("brackenford/S1/asymmetry-a1-");

        // Every plot decoded by the browser itself, at its full size.
        var images = page.Locator("figure img");
        var count = await images.CountAsync();
        Assert.True(count >= 5, $"{count} plots in the report");
        for (var i = 0; i < count; i++)
        {
            var natural = await images.Nth(i).EvaluateAsync<int>("img => img.complete ? img.naturalWidth : 0");
            Assert.True(natural >= 600, $"plot {i} did not load ({natural} px wide)");
        }

        // The peak ring's polar plot points where the event says, and the event points away from the simulated channel (120 deg).
        var peakSrc = await page.Locator("figure[data-peak='true'] img").GetAttributeAsync("src");
        using (var image = PlotPixels.FromDataUri(peakSrc!))
        {
            var drawn = image.ArrowDirectionDeg();
            output.WriteLine($"arrow {drawn:0.0} deg, event {e.Record.AsymmetryDirectionDeg:0.0} deg");
            Assert.True(PlotPixels.AngleBetween(drawn, e.Record.AsymmetryDirectionDeg) <= 3);
            Assert.True(PlotPixels.AngleBetween(drawn, 300) <= 40);
        }

        var shots = Path.Combine(AppContext.BaseDirectory, "screenshots");
        Directory.CreateDirectory(shots);
        var shot = Path.Combine(shots, "event-report.png");
        await page.ScreenshotAsync(new() { Path = shot, FullPage = true });
        output.WriteLine($"screenshot {shot}");
        Assert.True(new FileInfo(shot).Length > 50_000, "the screenshot is not empty");
        Assert.Empty(errors);
        // Self-contained: nothing fetched but the file itself and its embedded images.
        Assert.All(requests, url => Assert.True(url.StartsWith("file://", StringComparison.Ordinal) || url.StartsWith("data:", StringComparison.Ordinal), url));
        Directory.Delete(folder, recursive: true);
    }
}
