using System.Text.Json;
using SiloWatch.Integration.Tests.Support;

namespace SiloWatch.Integration.Tests;

/// <summary>The service writing its series to a real VictoriaMetrics, and resuming its state after a restart.</summary>
public sealed class StorageThroughTheServiceTests
{
    [Fact]
    public async Task SensorValuesAndEstimatesArriveInTheTimeSeriesStore()
    {
        if (TestStore.UrlOrNull() is not { } vm)
        {
            return;
        }

        await using var broker = await MosquittoServer.StartOrNullAsync();
        if (broker is null)
        {
            return;
        }

        var instance = "it-vm-" + Guid.NewGuid().ToString("N")[..6];
        await using var service = await ServiceUnderTest.StartAsync(broker.Port, instance, ("Storage:TimeSeries:Url", vm));
        await using var gateway = await TestMqtt.ConnectAsync(broker.Port, "gw-" + instance);
        var start = DateTimeOffset.UtcNow.AddSeconds(-30);
        for (var i = 0; i < 10; i++)
        {
            await gateway.PublishBatchAsync("brackenford", "F1", start.AddSeconds(i),
                [("LC1", 0.4, "mV/V"), ("LC2", 0.4, "mV/V"), ("LC3", 0.4, "mV/V"), ("LC4", 0.4, "mV/V"), ("T-W-000", 5.0, "degC")]);
        }

        await TestMqtt.WaitForAsync(() => service.Accepted("brackenford/F1") == 50, "50 samples accepted");
        await service.StopAsync(); // drains and flushes the sink

        using var http = new HttpClient { BaseAddress = new Uri(vm) };
        var raw = await WaitForSeriesAsync(http, "sensor_raw", "F1", "LC1", start);
        // 0.4 mV/V sent each second: the 1 s mean of the raw value is 0.4.
        Assert.All(raw.Values, v => Assert.Equal(0.4, v, 9));
        Assert.Equal(10, raw.Values.Count);
        Assert.Equal(start.ToUnixTimeMilliseconds() / 1000 * 1000, raw.Timestamps.Min());

        // 0.4 mV/V of 2 mV/V rated on a 1000 kN cell is 200 kN (zero offset 0, no temperature correction at the
        // 20 degC reference... here 5 degC, so only the small configured coefficients move it).
        var value = await WaitForSeriesAsync(http, "sensor_value", "F1", "LC1", start);
        Assert.All(value.Values, v => Assert.InRange(v, 199.0, 201.0));

        var mass = await WaitForSeriesAsync(http, "silo_estimate_mass_kg", "F1", null, start);
        Assert.NotEmpty(mass.Values);
    }

    [Fact]
    public async Task ARestartedServiceResumesItsTare()
    {
        await using var broker = await MosquittoServer.StartOrNullAsync();
        if (broker is null)
        {
            return;
        }

        var instance = "it-tare-" + Guid.NewGuid().ToString("N")[..6];
        var cells = new (string, double, string)[] { ("LC1", 0.05, "mV/V"), ("LC2", 0.05, "mV/V"), ("LC3", 0.05, "mV/V"), ("LC4", 0.05, "mV/V"), ("T-W-000", 5.0, "degC") };
        await using (var first = await ServiceUnderTest.StartAsync(broker.Port, instance))
        {
            await using var gateway = await TestMqtt.ConnectAsync(broker.Port, "gw-" + instance);
            await gateway.PublishBatchAsync("brackenford", "F1", DateTimeOffset.UtcNow, cells);
            await TestMqtt.WaitForAsync(() => first.Accepted("brackenford/F1") == 5, "samples accepted");
            await first.StopAsync();
            // With the workers stopped nothing else touches the monitor.
            first.Ingest.Pipelines.Single(p => p.Silo.SiloId == "F1").Monitor.Tare("integration-test", DateTimeOffset.UtcNow.ToUnixTimeMilliseconds());
            first.Ingest.SaveSnapshots(first.Journal);
        }

        await using var second = await ServiceUnderTest.StartAsync(broker.Port, instance);
        var tare = second.Ingest.Pipelines.Single(p => p.Silo.SiloId == "F1").Monitor.LastTare;
        Assert.NotNull(tare);
        Assert.Equal("integration-test", tare.By);
        Assert.Equal(4, tare.Values.Count(v => v.SensorId.StartsWith("LC", StringComparison.Ordinal)));
    }

    private static async Task<(List<double> Values, List<long> Timestamps)> WaitForSeriesAsync(HttpClient http, string metric, string silo, string? sensor, DateTimeOffset from)
    {
        var selector = sensor is null ? $"{metric}{{silo=\"{silo}\"}}" : $"{metric}{{silo=\"{silo}\",sensor=\"{sensor}\"}}";
        var deadline = DateTime.UtcNow.AddSeconds(30);
        while (true)
        {
            // Only this test's time window: other tests may write the same series.
            var window = $"&start={from.ToUnixTimeSeconds() - 1}&end={from.AddMinutes(2).ToUnixTimeSeconds()}";
            var body = await http.GetStringAsync("/api/v1/export?match[]=" + Uri.EscapeDataString(selector) + window);
            var values = new List<double>();
            var timestamps = new List<long>();
            foreach (var line in body.Split('\n', StringSplitOptions.RemoveEmptyEntries))
            {
                using var doc = JsonDocument.Parse(line);
                values.AddRange(doc.RootElement.GetProperty("values").EnumerateArray().Select(v => v.GetDouble()));
                timestamps.AddRange(doc.RootElement.GetProperty("timestamps").EnumerateArray().Select(v => v.GetInt64()));
            }

            if (values.Count > 0 || DateTime.UtcNow > deadline)
            {
                Assert.True(values.Count > 0, $"no points for {selector}");
                return (values, timestamps);
            }

            await Task.Delay(200);
        }
    }
}
