using Microsoft.Playwright;

namespace SiloWatch.Browser.Tests.Support;

/// <summary>Debian's chromium driven by Playwright (nothing downloaded), with the launch flags of the project's notes.</summary>
public static class HeadlessChromium
{
    /// <summary>The chromium binary, or null when it is missing and servers are not required (with SILOWATCH_REQUIRE_SERVERS=1 a missing one fails).</summary>
    public static string? Locate()
    {
        var path = Environment.GetEnvironmentVariable("SILOWATCH_TEST_CHROMIUM");
        if (string.IsNullOrEmpty(path) && File.Exists("/usr/bin/chromium"))
        {
            path = "/usr/bin/chromium";
        }

        if (string.IsNullOrEmpty(path) || !File.Exists(path))
        {
            Assert.False(Environment.GetEnvironmentVariable("SILOWATCH_REQUIRE_SERVERS") == "1",
                "chromium is required (SILOWATCH_REQUIRE_SERVERS=1): set SILOWATCH_TEST_CHROMIUM; tests/run.sh installs Debian's chromium");
            return null;
        }

        return path;
    }

    public static Task<IBrowser> LaunchAsync(IPlaywright playwright, string executable) =>
        playwright.Chromium.LaunchAsync(new()
        {
            ExecutablePath = executable,
            Headless = true,
            Args = ["--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run", "--disable-background-networking", "--disable-component-update", "--disable-sync"],
        });
}
