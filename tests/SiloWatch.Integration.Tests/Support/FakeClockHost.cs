using Microsoft.AspNetCore.Builder;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Time.Testing;
using SiloWatch.Service.Hosting;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Integration.Tests.Support;

/// <summary>
/// The real host's wiring and the demo plant on a fake clock, one partition, never started as a host and
/// without a broker: a test drives its pipelines itself, or starts the workers and writes to their queue.
/// Its data lives in a temporary folder removed at the end.
/// </summary>
public sealed class FakeClockHost : IAsyncDisposable
{
    private readonly string _folder = Directory.CreateTempSubdirectory("silowatch-fake-clock-").FullName;
    private readonly CancellationTokenSource _stop = new();
    private bool _started;

    /// <summary>Where the clock starts: 2026-12-01T10:00Z.</summary>
    public static readonly DateTimeOffset Start = new(2026, 12, 1, 10, 0, 0, TimeSpan.Zero);

    public FakeClockHost(string instanceId, Action<WebApplicationBuilder>? configure = null)
    {
        Time = new FakeTimeProvider(Start);
        var settings = new Dictionary<string, string>(StringComparer.Ordinal)
        {
            ["Storage:EmbeddedPath"] = Path.Combine(_folder, "series.db"),
            ["Storage:JournalPath"] = Path.Combine(_folder, "journal.db"),
            ["Mqtt:Host"] = "127.0.0.1",
            ["Mqtt:Port"] = "1",
            ["Instance:Id"] = instanceId,
            ["Instance:Partitions"] = "1",
            ["Instance:LogInterval"] = "00:00:00",
            ["Instance:PlantFile"] = Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json"),
            ["Instance:MaterialsFile"] = Path.Combine(AppContext.BaseDirectory, "config", "materials.json"),
            ["Demo:RunSimulator"] = "false",
            ["Health:Urls"] = "http://127.0.0.1:0",
            ["Serilog:MinimumLevel:Default"] = "Warning",
        };
        App = SiloWatchApp.Build([.. settings.Select(s => $"--{s.Key}={s.Value}")], b =>
        {
            b.Services.AddSingleton<TimeProvider>(Time);
            configure?.Invoke(b);
        });
    }

    public FakeTimeProvider Time { get; }

    public WebApplication App { get; }

    public TelemetryIngest Ingest => App.Services.GetRequiredService<TelemetryIngest>();

    public PartitionWorker Worker => Ingest.Workers.Single();

    public SiloPipeline Pipeline(string siloKey) => Ingest.Pipelines.Single(p => p.Silo.Key == siloKey);

    /// <summary>Starts the partition worker (the test then writes messages to its queue).</summary>
    public void StartWorkers()
    {
        Ingest.Start(() => 1, _stop.Token);
        _started = true;
    }

    public async ValueTask DisposeAsync()
    {
        await _stop.CancelAsync();
        if (_started)
        {
            await Ingest.DrainAsync(CancellationToken.None).WaitAsync(TimeSpan.FromSeconds(30));
        }

        await Ingest.Acks.DisposeAsync();
        await App.DisposeAsync();
        _stop.Dispose();
        Directory.Delete(_folder, recursive: true);
    }
}
