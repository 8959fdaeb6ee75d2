using System.Net;
using System.Security.Cryptography;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Playwright;
using SiloWatch.Browser.Tests.Support;
using SiloWatch.Monitoring.Alarms;
using SiloWatch.Service.Ingest;
using SiloWatch.Service.StatusPage;
using SiloWatch.Storage;
using Xunit.Abstractions;

namespace SiloWatch.Browser.Tests;

/// <summary>
/// The status page in a real headless Chromium (Debian's, never downloaded), served by the running
/// service and fed by the plant simulator.
/// </summary>
public sealed class StatusPageTests(ITestOutputHelper output)
{
    private const string Alarm = "brackenford/S1/overfill";

    [Fact]
    public async Task TheLivePageShowsChangingValuesAndAnAuthorisedOperatorAcknowledgesARealAlarm()
    {
        var chromium = HeadlessChromium.Locate();
        if (chromium is null)
        {
            return;
        }

        // A real overfill alarm from real data: S1 starts 85 % full in this scenario, its limit is lowered to 50 % for the test.
        var plant = LiveService.PlantWithLimit("S1", "OverfillPercent", 50);
        var password = Convert.ToBase64String(RandomNumberGenerator.GetBytes(18));
        await using var service = await LiveService.StartAsync("eccentric-discharge.json", speed: 5, plant,
            ("StatusPage:Users:0:Name", "op-anna"),
            ("StatusPage:Users:0:PasswordHash", OperatorPasswords.Hash(password, iterations: 100_000)));

        using var playwright = await Playwright.CreateAsync();
        await using var browser = await HeadlessChromium.LaunchAsync(playwright, chromium);
        var page = await browser.NewPageAsync(new() { ViewportSize = new() { Width = 1400, Height = 1000 } });
        var errors = new List<string>();
        page.PageError += (_, e) => errors.Add(e);
        await page.GotoAsync(service.BaseAddress.ToString());

        // Live: the stream connects and the mass of S1 changes without a reload.
        await Assertions.Expect(page.Locator("#link")).ToHaveAttributeAsync("data-state", "live", new() { Timeout = 30_000 });
        var mass = page.Locator("[data-silo='brackenford/S1'] .mass .value");
        await Assertions.Expect(mass).Not.ToHaveTextAsync("\u2014", new() { Timeout = 30_000 });
        var first = await mass.TextContentAsync();
        var asOf = page.Locator("[data-silo='brackenford/S1'] .quality .band");
        var firstAsOf = await asOf.TextContentAsync();
        await Assertions.Expect(asOf).Not.ToHaveTextAsync(firstAsOf!, new() { Timeout = 30_000 });
        await WaitUntilAsync(async () => await mass.TextContentAsync() != first, "the mass of S1 to change on the page");
        output.WriteLine($"S1 mass went from {first} t to {await mass.TextContentAsync()} t");
        await Assertions.Expect(page.Locator("#caution")).ToContainTextAsync("not a safety function");

        // The alarm, raised by the engine from the simulated level, appears; reading needs no login, acting does.
        var row = page.Locator($"tr[data-alarm='{Alarm}']");
        await Assertions.Expect(row).ToHaveAttributeAsync("data-state", "unacknowledged", new() { Timeout = 30_000 });
        await Assertions.Expect(row.Locator("button.ack")).ToHaveCountAsync(0);

        // One alarm is no flood: the site row says so.
        var siteRow = page.Locator("tr[data-site='brackenford']");
        await Assertions.Expect(siteRow).ToHaveAttributeAsync("data-flood", "false");
        await Assertions.Expect(siteRow.Locator("td.flood")).ToHaveTextAsync("no alarm flood");
        await Assertions.Expect(siteRow.Locator("td.silo-count")).ToHaveTextAsync("4");
        using (var http = new HttpClient { BaseAddress = service.BaseAddress })
        {
            var anonymous = await http.PostAsync($"api/alarms/brackenford/S1/overfill/ack", new StringContent("{}"));
            Assert.Equal(HttpStatusCode.Unauthorized, anonymous.StatusCode);
            var listed = await http.GetStringAsync("api/alarms");
            Assert.Contains("\"alarm\":\"" + Alarm + "\"", listed, StringComparison.Ordinal);
        }

        await page.FillAsync("#loginName", "op-anna");
        await page.FillAsync("#loginPassword", "not the password");
        await page.ClickAsync("#login button[type=submit]");
        await Assertions.Expect(page.Locator("#loginError")).ToContainTextAsync("wrong", new() { Timeout = 15_000 });

        await page.FillAsync("#loginName", "op-anna");
        await page.FillAsync("#loginPassword", password);
        await page.ClickAsync("#login button[type=submit]");
        await Assertions.Expect(page.Locator("#whoName")).ToHaveTextAsync("op-anna", new() { Timeout = 15_000 });
        await Assertions.Expect(page.Locator("#login")).ToBeHiddenAsync();

        await row.Locator("button.ack").ClickAsync(new() { Timeout = 15_000 });
        await Assertions.Expect(row).ToHaveAttributeAsync("data-state", "acknowledged", new() { Timeout = 15_000 });
        await Assertions.Expect(page.Locator("#actionResult")).ToContainTextAsync("unacknowledged -> acknowledged");

        // The engine moved and the journal says who.
        var s1 = service.Services.GetRequiredService<TelemetryIngest>().Pipelines.Single(p => p.Silo.SiloId == "S1").Alarms!;
        Assert.Equal(AlarmStateName.Acknowledged, s1.Active.Single(a => a.AlarmId == Alarm).State);
        var journal = service.Services.GetRequiredService<Journal>();
        Assert.Contains(journal.QueryAlarmHistory("brackenford", "S1", 0, long.MaxValue), h => h.AlarmId == Alarm && h.ToState == "acknowledged" && h.User == "op-anna");

        var folder = Path.Combine(AppContext.BaseDirectory, "screenshots");
        Directory.CreateDirectory(folder);
        var shot = Path.Combine(folder, "status-page.png");
        await page.ScreenshotAsync(new() { Path = shot, FullPage = true });
        await page.SetViewportSizeAsync(390, 844);
        await page.ScreenshotAsync(new() { Path = Path.Combine(folder, "status-page-phone.png"), FullPage = true });
        output.WriteLine($"screenshots in {folder}");
        Assert.True(new FileInfo(shot).Length > 10_000, "the screenshot is not empty");
        Assert.Empty(errors);
    }

    [Fact]
    public async Task ASiteInAnAlarmFloodIsShownInItsRowWithTheCountOfAlarms()
    {
        var chromium = HeadlessChromium.Locate();
        if (chromium is null)
        {
            return;
        }

        // The flood threshold lowered to no activation at all, so that S1's real overfill alarm floods the site
        // (the window is on the samples' clock, long enough that the flood does not end during the test).
        var plant = LiveService.PlantWithLimit("S1", "OverfillPercent", 50);
        await using var service = await LiveService.StartAsync("eccentric-discharge.json", speed: 5, plant,
            ("Alarms:FloodCount", "0"), ("Alarms:FloodEndCount", "0"), ("Alarms:FloodWindow", "01:00:00"));

        using var playwright = await Playwright.CreateAsync();
        await using var browser = await HeadlessChromium.LaunchAsync(playwright, chromium);
        var page = await browser.NewPageAsync(new() { ViewportSize = new() { Width = 1400, Height = 1000 } });
        var errors = new List<string>();
        page.PageError += (_, e) => errors.Add(e);
        await page.GotoAsync(service.BaseAddress.ToString());

        var siteRow = page.Locator("tr[data-site='brackenford']");
        await Assertions.Expect(siteRow).ToHaveAttributeAsync("data-flood", "true", new() { Timeout = 30_000 });
        await Assertions.Expect(siteRow.Locator("td.flood")).ToHaveTextAsync(
            new System.Text.RegularExpressions.Regex(@"^IN FLOOD: [1-9]\d* alarms within 60 min, since \d{4}-\d\d-\d\d \d\d:\d\d:\d\dZ\. Work from the highest priority down\.$"));

        // The page shows what the engine's shared flood count says, and the API carries it for other clients.
        var flood = service.Services.GetRequiredService<SiloWatch.Service.Alarms.SiloAlarmsFactory>().Floods.Active("brackenford");
        Assert.NotNull(flood);
        Assert.True(flood.Value >= 1, $"flood count {flood.Value}");
        using var http = new HttpClient { BaseAddress = service.BaseAddress };
        using var status = System.Text.Json.JsonDocument.Parse(await http.GetStringAsync("api/status"));
        var site = Assert.Single(status.RootElement.GetProperty("sites").EnumerateArray());
        Assert.Equal("brackenford", site.GetProperty("site").GetString());
        Assert.True(site.GetProperty("flood").GetBoolean());
        Assert.True(site.GetProperty("floodAlarms").GetDouble() >= 1);
        Assert.Equal(4, site.GetProperty("silos").GetInt32());
        Assert.Empty(errors);
    }

    private static async Task WaitUntilAsync(Func<Task<bool>> condition, string what)
    {
        var deadline = DateTime.UtcNow + TimeSpan.FromSeconds(30);
        while (!await condition())
        {
            Assert.True(DateTime.UtcNow < deadline, $"timed out waiting for {what}");
            await Task.Delay(100);
        }
    }
}
