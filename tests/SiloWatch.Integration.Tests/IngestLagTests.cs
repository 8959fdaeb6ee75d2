using System.Buffers;
using System.Text;
using System.Text.Json;
using Microsoft.AspNetCore.Builder;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Logging;
using Microsoft.Extensions.Logging.Abstractions;
using Microsoft.Extensions.Time.Testing;
using SiloWatch.Integration.Tests.Support;
using SiloWatch.Service.Health;
using SiloWatch.Service.Hosting;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Integration.Tests;

/// <summary>
/// The service being behind shows in its ingest lag, not in its silos' sensor quality: a partition worker
/// on a fake clock takes a message received eight seconds earlier; /health's figures for the partition say
/// how long it waited, and the lag watch reports the partition (and logs one warning line for it), while
/// a message taken as it arrives is no lag. The real host's wiring and the demo plant; no broker.
/// </summary>
public sealed class IngestLagTests : IAsyncDisposable
{
    private static readonly DateTimeOffset Start = new(2026, 12, 1, 10, 0, 0, TimeSpan.Zero);

    private readonly FakeTimeProvider _time = new(Start);
    private readonly string _folder = Directory.CreateTempSubdirectory("silowatch-lag-").FullName;
    private readonly CancellationTokenSource _stop = new();
    private readonly WebApplication _app;
    private readonly TelemetryIngest _ingest;
    private readonly SiloPipeline _pipeline;
    private long _seq;

    public IngestLagTests()
    {
        _app = SiloWatchApp.Build([
            $"--Storage:EmbeddedPath={Path.Combine(_folder, "series.db")}",
            $"--Storage:JournalPath={Path.Combine(_folder, "journal.db")}",
            "--Mqtt:Host=127.0.0.1", "--Mqtt:Port=1", "--Instance:Id=lag-0",
            "--Instance:Partitions=1", "--Instance:LogInterval=00:00:00",
            $"--Instance:PlantFile={Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json")}",
            $"--Instance:MaterialsFile={Path.Combine(AppContext.BaseDirectory, "config", "materials.json")}",
            "--Demo:RunSimulator=false", "--Health:Urls=http://127.0.0.1:0", "--Serilog:MinimumLevel:Default=Warning"],
            b => b.Services.AddSingleton<TimeProvider>(_time));
        _ingest = _app.Services.GetRequiredService<TelemetryIngest>();
        _pipeline = _ingest.Pipelines.Single(p => p.Silo.Key == "brackenford/S1");
        _ingest.Start(() => 1, _stop.Token);
    }

    private PartitionWorker Worker => _ingest.Workers.Single();

    [Fact]
    public async Task AMessageTakenEightSecondsAfterItsReceiptIsLagAndOneTakenAsItArrivesIsNot()
    {
        var log = new CountingLogger();
        var watch = new IngestLagWatch(_ingest, _time, log);
        var nowMs = _time.GetUtcNow().ToUnixTimeMilliseconds();

        await SendAsync(receivedMs: nowMs - 8000);

        var health = QueueHealth.Of(Worker, nowMs);
        Assert.Equal(8000, health.LastDelayMs);
        Assert.Equal(0, health.WaitingAtMostMs); // nothing waits now
        var behind = Assert.Single(watch.Check(nowMs));
        Assert.Equal(8000, behind.LastDelayMs);
        Assert.Equal(1, log.Warnings);

        // The same figure a second later is no news: the worker has taken nothing since, and nothing waits.
        _time.Advance(TimeSpan.FromSeconds(1));
        Assert.Empty(watch.Check(_time.GetUtcNow().ToUnixTimeMilliseconds()));

        // A message taken as it arrives: no lag, nothing reported.
        nowMs = _time.GetUtcNow().ToUnixTimeMilliseconds();
        await SendAsync(receivedMs: nowMs);
        Assert.Equal(0, QueueHealth.Of(Worker, nowMs).LastDelayMs);
        _time.Advance(TimeSpan.FromSeconds(1));
        Assert.Empty(watch.Check(_time.GetUtcNow().ToUnixTimeMilliseconds()));
        Assert.Equal(1, log.Warnings);
    }

    [Fact]
    public async Task BehindAgainWithinTheWarningIntervalIsReportedButNotLoggedAgain()
    {
        var log = new CountingLogger();
        var watch = new IngestLagWatch(_ingest, _time, log);
        for (var i = 0; i < 3; i++)
        {
            var nowMs = _time.GetUtcNow().ToUnixTimeMilliseconds();
            await SendAsync(receivedMs: nowMs - 6000);
            Assert.Single(watch.Check(nowMs));
            _time.Advance(TimeSpan.FromSeconds(1));
        }

        Assert.Equal(1, log.Warnings);
        _time.Advance(IngestLagWatch.WarnInterval);
        var later = _time.GetUtcNow().ToUnixTimeMilliseconds();
        await SendAsync(receivedMs: later - 6000);
        Assert.Single(watch.Check(later));
        Assert.Equal(2, log.Warnings);
    }

    /// <summary>Writes one message of S1 received at <paramref name="receivedMs"/> to the worker's queue and waits until it is processed.</summary>
    private async Task SendAsync(long receivedMs)
    {
        var json = JsonSerializer.Serialize(new
        {
            pub = "lag-gw",
            seq = ++_seq,
            ts = receivedMs,
            samples = new[] { new { sensor = "LC1", value = 0.8 + (0.001 * _seq), unit = "mV/V" } },
        });
        var processed = Worker.MessagesProcessed;
        _pipeline.Enqueuing();
        await Worker.Writer.WriteAsync(IngestMessage.Copy(_pipeline, new ReadOnlySequence<byte>(Encoding.UTF8.GetBytes(json)), receivedMs, ticket: null));
        await TestMqtt.WaitForAsync(() => Worker.MessagesProcessed > processed, $"message {_seq} processed");
    }

    /// <summary>Counts the warnings written (the lag watch's only output besides what it returns).</summary>
    private sealed class CountingLogger : ILogger<IngestLagWatch>
    {
        private int _warnings;

        public int Warnings => Volatile.Read(ref _warnings);

        public IDisposable? BeginScope<TState>(TState state)
            where TState : notnull => NullLogger.Instance.BeginScope(state);

        public bool IsEnabled(LogLevel logLevel) => true;

        public void Log<TState>(LogLevel logLevel, EventId eventId, TState state, Exception? exception, Func<TState, Exception?, string> formatter)
        {
            if (logLevel == LogLevel.Warning)
            {
                Interlocked.Increment(ref _warnings);
            }
        }
    }

    public async ValueTask DisposeAsync()
    {
        await _stop.CancelAsync();
        await _ingest.DrainAsync(CancellationToken.None).WaitAsync(TimeSpan.FromSeconds(30));
        await _ingest.Acks.DisposeAsync();
        await _app.DisposeAsync();
        _stop.Dispose();
        Directory.Delete(_folder, recursive: true);
    }
}
