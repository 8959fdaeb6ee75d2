using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Hosting.Server;
using Microsoft.AspNetCore.Hosting.Server.Features;
using Microsoft.Extensions.DependencyInjection;
using SiloWatch.Service.Hosting;
using SiloWatch.Integration.Tests.Support;
using SiloWatch.Simulator;

namespace SiloWatch.Browser.Tests.Support;

/// <summary>
/// The real SiloWatch host with its embedded broker on a free port, its status page on a free loopback
/// port, and the plant simulator playing a scenario into it, accelerated (evaluated on the samples' clock).
/// </summary>
public sealed class LiveService : IAsyncDisposable
{
    private readonly WebApplication _app;
    private readonly CancellationTokenSource _stopSimulator = new();
    private readonly string _folder;
    private Task _simulator = Task.CompletedTask;

    private LiveService(WebApplication app, string folder)
    {
        _app = app;
        _folder = folder;
    }

    public IServiceProvider Services => _app.Services;

    public Uri BaseAddress { get; private set; } = new("http://127.0.0.1/");

    public static async Task<LiveService> StartAsync(string scenario, double speed, string plantPath, params (string Key, string Value)[] settings)
    {
        var folder = Directory.CreateTempSubdirectory("silowatch-browser-").FullName;
        var args = new List<string>
        {
            $"--Storage:EmbeddedPath={Path.Combine(folder, "series.db")}",
            $"--Storage:JournalPath={Path.Combine(folder, "journal.db")}",
            $"--Storage:TimeSeries:SpoolDirectory={Path.Combine(folder, "spool")}",
            "--Mqtt:Host=",
            "--EmbeddedBroker:Port=0",
            "--Instance:Id=browser-0",
            "--Instance:PublishInterval=00:00:00.200",
            "--Instance:LogInterval=00:00:00",
            $"--Instance:PlantFile={plantPath}",
            $"--Instance:MaterialsFile={Path.Combine(AppContext.BaseDirectory, "config", "materials.json")}",
            "--Demo:RunSimulator=false",
            "--Decoder:MaxLateness=00:00:00",
            "--Evaluation:Clock=Samples",
            "--Health:Urls=http://127.0.0.1:0",
            "--Serilog:MinimumLevel:Default=Warning",
        };
        args.AddRange(settings.Select(s => $"--{s.Key}={s.Value}"));
        var app = SiloWatchApp.Build([.. args]);
        await app.StartAsync();
        var service = new LiveService(app, folder);
        var address = app.Services.GetRequiredService<IServer>().Features.Get<IServerAddressesFeature>()!.Addresses.First();
        service.BaseAddress = new Uri(address.EndsWith('/') ? address : address + "/");

        var (host, port) = await app.Services.GetRequiredService<BrokerEndpoint>().WhenReadyAsync(CancellationToken.None);
        var options = new SimulatorRunOptions
        {
            PlantPath = plantPath,
            MaterialsPath = Path.Combine(AppContext.BaseDirectory, "config", "materials.json"),
            ScenarioPath = Path.Combine(AppContext.BaseDirectory, "scenarios", scenario),
            BrokerHost = host,
            BrokerPort = port,
            Speed = speed,
            Seed = 3,
            ClientId = "sim-browser",
        };
        var token = service._stopSimulator.Token;
        service._simulator = Task.Run(() => SimulatorRunner.RunAsync(options, progress: null, token), CancellationToken.None);
        return service;
    }

    /// <summary>A copy of the demo plant with one silo's alarm limit changed, so a test raises a real alarm from real data.</summary>
    public static string PlantWithLimit(string siloId, string limit, double value) => DemoPlantCopy.WithLimits((siloId, limit, value));

    public async ValueTask DisposeAsync()
    {
        await _stopSimulator.CancelAsync();
        try
        {
            await _simulator;
        }
        catch (OperationCanceledException)
        {
        }

        await _app.StopAsync();
        await _app.DisposeAsync();
        _stopSimulator.Dispose();
        try
        {
            Directory.Delete(_folder, recursive: true);
        }
        catch (IOException)
        {
        }
    }
}
