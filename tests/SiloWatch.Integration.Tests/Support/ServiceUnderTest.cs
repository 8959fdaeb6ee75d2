using Microsoft.AspNetCore.Builder;
using Microsoft.Extensions.DependencyInjection;
using SiloWatch.Service.Hosting;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Integration.Tests.Support;

/// <summary>The real SiloWatch host, in-process, pointed at a test broker; demo simulator off.</summary>
public sealed class ServiceUnderTest : IAsyncDisposable
{
    private readonly WebApplication _app;

    private ServiceUnderTest(WebApplication app) => _app = app;

    public TelemetryIngest Ingest => _app.Services.GetRequiredService<TelemetryIngest>();

    public IngestCounters Counters => _app.Services.GetRequiredService<IngestCounters>();

    public TelemetryBridgeService Bridge => _app.Services.GetRequiredService<TelemetryBridgeService>();

    public PublishRefusals Refusals => _app.Services.GetRequiredService<PublishRefusals>();

    public SiloWatch.Storage.Journal Journal => _app.Services.GetRequiredService<SiloWatch.Storage.Journal>();

    public long Accepted(string siloKey) => Ingest.Pipelines.Where(p => p.Silo.Key == siloKey).Sum(p => p.SamplesAccepted);

    /// <summary>The base address of /health and the status page (a free loopback port).</summary>
    public Uri BaseAddress => new(_app.Urls.First());

    public static Task<ServiceUnderTest> StartAsync(int brokerPort, string instanceId = "it-0", params (string Key, string Value)[] settings) =>
        StartAsync(brokerPort, instanceId, configure: null, settings);

    /// <summary>As above; <paramref name="configure"/> adds to the host before it is built (e.g. a log sink).</summary>
    public static async Task<ServiceUnderTest> StartAsync(int brokerPort, string instanceId, Action<WebApplicationBuilder>? configure,
        params (string Key, string Value)[] settings)
    {
        // One data folder per instance id and test run: a restarted instance finds its own journal again.
        var data = Path.Combine(Path.GetTempPath(), "silowatch-it-" + Environment.ProcessId, instanceId);
        Directory.CreateDirectory(data);
        var args = new List<string>
        {
            $"--Storage:EmbeddedPath={Path.Combine(data, "series.db")}",
            $"--Storage:JournalPath={Path.Combine(data, "journal.db")}",
            $"--Storage:TimeSeries:SpoolDirectory={Path.Combine(data, "spool")}",
            "--Mqtt:Host=127.0.0.1",
            $"--Mqtt:Port={brokerPort}",
            $"--Mqtt:ClientId=silowatch-{instanceId}",
            $"--Instance:Id={instanceId}",
            "--Instance:PublishInterval=00:00:00.200",
            "--Instance:LogInterval=00:00:00",
            $"--Instance:PlantFile={Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json")}",
            $"--Instance:MaterialsFile={Path.Combine(AppContext.BaseDirectory, "config", "materials.json")}",
            "--Demo:RunSimulator=false",
            "--Health:Urls=http://127.0.0.1:0",
            "--Serilog:MinimumLevel:Default=Warning",
        };
        args.AddRange(settings.Select(s => $"--{s.Key}={s.Value}"));
        var app = SiloWatchApp.Build([.. args], configure);
        await app.StartAsync();
        var service = new ServiceUnderTest(app);
        await TestMqtt.WaitForAsync(() => service.Bridge.Client?.IsConnected == true, "service connected to the broker");
        return service;
    }

    public Task StopAsync() => _app.StopAsync();

    public async ValueTask DisposeAsync() => await _app.DisposeAsync();
}
