using System.Buffers;
using System.Text;
using System.Text.Json;
using Microsoft.Extensions.Logging;
using Microsoft.Extensions.Logging.Abstractions;
using Microsoft.Extensions.Time.Testing;
using SiloWatch.Integration.Tests.Support;
using SiloWatch.Service.Health;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Integration.Tests;

/// <summary>
/// The service being behind shows in its ingest lag, not in its silos' sensor quality: a partition worker
/// on a fake clock takes a message received eight seconds earlier; /health's figures for the partition say
/// how long it waited, and the lag watch reports the partition (and logs one warning line for it), while
/// a message taken as it arrives is no lag; a worker that takes nothing while a message waits is reported
/// from the second check that finds it so. The real host's wiring and the demo plant; no broker.
/// </summary>
public sealed class IngestLagTests : IAsyncDisposable
{
    private readonly FakeClockHost _host = new("lag-0");
    private readonly SiloPipeline _pipeline;
    private long _seq;

    public IngestLagTests() => _pipeline = _host.Pipeline("brackenford/S1");

    private FakeTimeProvider Time => _host.Time;

    private TelemetryIngest Ingest => _host.Ingest;

    private PartitionWorker Worker => _host.Worker;

    [Fact]
    public async Task AMessageTakenEightSecondsAfterItsReceiptIsLagAndOneTakenAsItArrivesIsNot()
    {
        _host.StartWorkers();
        var log = new CountingLogger();
        var watch = new IngestLagWatch(Ingest, Time, log);
        var nowMs = Time.GetUtcNow().ToUnixTimeMilliseconds();

        await SendAsync(receivedMs: nowMs - 8000);

        var health = QueueHealth.Of(Worker, nowMs);
        Assert.Equal(8000, health.LastDelayMs);
        Assert.Equal(0, health.WaitingAtMostMs); // nothing waits now
        var behind = Assert.Single(watch.Check(nowMs));
        Assert.Equal(8000, behind.LastDelayMs);
        Assert.Equal(1, log.Warnings);

        // The same figure a second later is no news: the worker has taken nothing since, and nothing waits.
        Time.Advance(TimeSpan.FromSeconds(1));
        Assert.Empty(watch.Check(Time.GetUtcNow().ToUnixTimeMilliseconds()));

        // A message taken as it arrives: no lag, nothing reported.
        nowMs = Time.GetUtcNow().ToUnixTimeMilliseconds();
        await SendAsync(receivedMs: nowMs);
        Assert.Equal(0, QueueHealth.Of(Worker, nowMs).LastDelayMs);
        Time.Advance(TimeSpan.FromSeconds(1));
        Assert.Empty(watch.Check(Time.GetUtcNow().ToUnixTimeMilliseconds()));
        Assert.Equal(1, log.Warnings);
    }

    [Fact]
    public async Task BehindAgainWithinTheWarningIntervalIsReportedButNotLoggedAgain()
    {
        _host.StartWorkers();
        var log = new CountingLogger();
        var watch = new IngestLagWatch(Ingest, Time, log);
        for (var i = 0; i < 3; i++)
        {
            var nowMs = Time.GetUtcNow().ToUnixTimeMilliseconds();
            await SendAsync(receivedMs: nowMs - 6000);
            Assert.Single(watch.Check(nowMs));
            Time.Advance(TimeSpan.FromSeconds(1));
        }

        Assert.Equal(1, log.Warnings);
        Time.Advance(IngestLagWatch.WarnInterval);
        var later = Time.GetUtcNow().ToUnixTimeMilliseconds();
        await SendAsync(receivedMs: later - 6000);
        Assert.Single(watch.Check(later));
        Assert.Equal(2, log.Warnings);
    }

    [Fact]
    public void AWorkerThatTakesNothingWhileMessagesWaitIsReportedFromTheSecondCheckThatFindsItSo()
    {
        // The worker is not started: what is written to its queue stays there, as behind a worker starved of CPU.
        var log = new CountingLogger();
        var watch = new IngestLagWatch(Ingest, Time, log);
        var receivedMs = Time.GetUtcNow().ToUnixTimeMilliseconds();
        _pipeline.Process(Payload(receivedMs), receivedMs);
        _pipeline.Enqueuing();
        Assert.True(Worker.Writer.TryWrite(Message(receivedMs + 100)));

        Time.Advance(TimeSpan.FromSeconds(6));
        Assert.Empty(watch.Check(Time.GetUtcNow().ToUnixTimeMilliseconds())); // the first look: nothing to compare with
        Time.Advance(TimeSpan.FromSeconds(1));
        var nowMs = Time.GetUtcNow().ToUnixTimeMilliseconds();
        Assert.Empty(watch.Check(nowMs)); // nothing taken since the last look, once: could be a message just arriving
        var health = QueueHealth.Of(Worker, nowMs);
        Assert.Equal(1, health.Depth);
        Assert.Equal(7000, health.WaitingAtMostMs);

        Time.Advance(TimeSpan.FromSeconds(1));
        var behind = Assert.Single(watch.Check(Time.GetUtcNow().ToUnixTimeMilliseconds()));
        Assert.Equal(8000, behind.WaitingAtMostMs);
        Assert.Equal(1, log.Warnings);
    }

    /// <summary>Writes one message of S1 received at <paramref name="receivedMs"/> to the worker's queue and waits until it is processed.</summary>
    private async Task SendAsync(long receivedMs)
    {
        var processed = Worker.MessagesProcessed;
        _pipeline.Enqueuing();
        await Worker.Writer.WriteAsync(Message(receivedMs));
        await TestMqtt.WaitForAsync(() => Worker.MessagesProcessed > processed, $"message {_seq} processed");
    }

    private IngestMessage Message(long receivedMs) =>
        IngestMessage.Copy(_pipeline, new ReadOnlySequence<byte>(Payload(receivedMs)), receivedMs, ticket: null);

    /// <summary>A message of S1's first load cell, stamped at its receipt.</summary>
    private byte[] Payload(long receivedMs) => Encoding.UTF8.GetBytes(JsonSerializer.Serialize(new
    {
        pub = "lag-gw",
        seq = ++_seq,
        ts = receivedMs,
        samples = new[] { new { sensor = "LC1", value = 0.8 + (0.001 * _seq), unit = "mV/V" } },
    }));

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

    public ValueTask DisposeAsync() => _host.DisposeAsync();
}
