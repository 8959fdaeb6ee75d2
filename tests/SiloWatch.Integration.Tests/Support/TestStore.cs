namespace SiloWatch.Integration.Tests.Support;

/// <summary>The VictoriaMetrics that tests/run.sh starts (SILOWATCH_TEST_VM_URL).</summary>
public static class TestStore
{
    /// <summary>The store's URL, or null when none is configured and servers are not required (the test then returns); fails when they are.</summary>
    public static string? UrlOrNull()
    {
        var vm = Environment.GetEnvironmentVariable("SILOWATCH_TEST_VM_URL");
        if (string.IsNullOrEmpty(vm))
        {
            Assert.False(Environment.GetEnvironmentVariable("SILOWATCH_REQUIRE_SERVERS") == "1",
                "SILOWATCH_TEST_VM_URL is required (tests/run.sh starts victoria-metrics)");
            return null;
        }

        return vm;
    }
}
