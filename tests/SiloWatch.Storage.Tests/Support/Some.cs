using SiloWatch.Plant;

namespace SiloWatch.Storage.Tests.Support;

/// <summary>Builders for test data.</summary>
public static class Some
{
    /// <summary>A tag value unique to one test run, so tests sharing a server never see each other's points.</summary>
    public static string RunId() => "t" + Guid.NewGuid().ToString("N")[..16];

    /// <summary>A sensor series carrying a run tag.</summary>
    public static SeriesKey SensorSeries(string run, string silo = "S1", string sensor = "LC1") =>
        new(Measurements.Sensor, [new(Tags.Site, "brackenford"), new(Tags.Silo, silo), new(Tags.Sensor, sensor), new(Tags.Kind, "LoadCell"), new("run", run)], SensorFields.All);

    /// <summary>Whole seconds, ten minutes ago: inside any retention, never in the future.</summary>
    public static long RecentBaseMs() => (DateTimeOffset.UtcNow.ToUnixTimeMilliseconds() / 1000 * 1000) - 600_000;

    public static TimeSeriesOptions FastOptions(string url, string spoolDirectory) => new()
    {
        Url = url,
        Org = "test-org",
        Bucket = "test-bucket",
        BatchSize = 250,
        FlushInterval = TimeSpan.FromMilliseconds(100),
        BufferCapacityPoints = 100_000,
        RequestTimeout = TimeSpan.FromSeconds(5),
        SpoolDirectory = spoolDirectory,
        SpoolMaxBytes = 64L << 20,
        Retry = new RetryOptions { MaxAttempts = 2, BaseDelay = TimeSpan.FromMilliseconds(50), MaxDelay = TimeSpan.FromMilliseconds(400) },
    };

    public static PlantRegistry DemoPlant()
    {
        var (plant, findings) = PlantLoader.LoadFile(Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json"));
        Assert.True(plant.Sites.Count > 0, "demo plant did not load: " + string.Join("; ", findings));
        return new PlantRegistry(plant);
    }

    /// <summary>A loopback port nothing listens on (connection refused at once).</summary>
    public static int ClosedPort()
    {
        var listener = new System.Net.Sockets.TcpListener(System.Net.IPAddress.Loopback, 0);
        listener.Start();
        var port = ((System.Net.IPEndPoint)listener.LocalEndpoint).Port;
        listener.Stop();
        return port;
    }

    /// <summary>Polls until the condition holds; the timeout is a generous upper bound, not a speed check.</summary>
    public static async Task<bool> EventuallyAsync(Func<bool> condition, TimeSpan timeout)
    {
        var until = DateTime.UtcNow + timeout;
        while (DateTime.UtcNow < until)
        {
            if (condition())
            {
                return true;
            }

            await Task.Delay(50);
        }

        return condition();
    }
}
