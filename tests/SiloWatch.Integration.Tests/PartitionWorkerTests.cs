using System.Buffers;
using System.Text;
using System.Text.Json;
using Microsoft.AspNetCore.Builder;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Time.Testing;
using SiloWatch.Integration.Tests.Support;
using SiloWatch.Service.Hosting;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Integration.Tests;

/// <summary>
/// A partition worker on a fake clock: a silo's new samples are evaluated within the minimum
/// evaluation interval, no more often than that under a stream, and a silo without new samples is
/// still evaluated every publish interval at the service's clock; idle intervals are closed only when
/// the silo's feed is idle; a stop cut short leaves the queue to the broker and checkpoints the rest.
/// The real host's wiring and the demo plant; no broker (messages are written to the worker's queue directly).
/// </summary>
public sealed class PartitionWorkerTests : IAsyncDisposable
{
    private const int MinIntervalMs = 40;
    private const int PublishIntervalMs = 1000;
    private static readonly DateTimeOffset Start = new(2026, 12, 1, 10, 0, 0, TimeSpan.Zero);

    private readonly FakeTimeProvider _time = new(Start);
    private readonly string _folder = Directory.CreateTempSubdirectory("silowatch-schedule-").FullName;
    private readonly CancellationTokenSource _stop = new();
    private readonly WebApplication _app;
    private readonly TelemetryIngest _ingest;
    private readonly OutboundQueue _outbound;
    private readonly List<(string Silo, long EvaluatedMs, long? SampleMs)> _states = [];
    private readonly Dictionary<string, long> _seq = new(StringComparer.Ordinal);

    public PartitionWorkerTests()
    {
        _app = SiloWatchApp.Build([
            $"--Storage:EmbeddedPath={Path.Combine(_folder, "series.db")}",
            $"--Storage:JournalPath={Path.Combine(_folder, "journal.db")}",
            "--Mqtt:Host=127.0.0.1", "--Mqtt:Port=1", "--Instance:Id=schedule-0",
            $"--Instance:PublishInterval={TimeSpan.FromMilliseconds(PublishIntervalMs):c}",
            $"--Instance:MinEvaluationInterval={TimeSpan.FromMilliseconds(MinIntervalMs):c}",
            "--Instance:Partitions=1", "--Instance:LogInterval=00:00:00", "--Instance:QueueCapacity=65536",
            $"--Instance:PlantFile={Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json")}",
            $"--Instance:MaterialsFile={Path.Combine(AppContext.BaseDirectory, "config", "materials.json")}",
            "--Demo:RunSimulator=false", "--Health:Urls=http://127.0.0.1:0", "--Serilog:MinimumLevel:Default=Warning"],
            b => b.Services.AddSingleton<TimeProvider>(_time));
        _ingest = _app.Services.GetRequiredService<TelemetryIngest>();
        _outbound = _app.Services.GetRequiredService<OutboundQueue>();
        _ingest.Start(() => 1, _stop.Token);
    }

    private PartitionWorker Worker => _ingest.Workers.Single();

    [Fact]
    public async Task ASilosStateIncludesItsNewSamplesWithoutWaitingForThePublishInterval()
    {
        await WaitUntilWaitingAsync(Start.AddMilliseconds(PublishIntervalMs)); // the first clock evaluation, nothing else due

        await StepToAsync(Start.AddMilliseconds(300));
        var sent = await SendAsync("S1");

        // No time passes on the worker's clock: the state comes from the message itself, not from a timer.
        var state = Assert.Single(States("S1"));
        Assert.Equal(sent, state.SampleMs);
        Assert.Equal(sent, state.EvaluatedMs);
    }

    [Fact]
    public async Task UnderAStreamASiloIsEvaluatedNoMoreOftenThanTheMinimumIntervalAndItsLastSampleIsNotLeftBehind()
    {
        await WaitUntilWaitingAsync(Start.AddMilliseconds(PublishIntervalMs));

        // One message every 10 ms from 100 ms to 300 ms: 21 messages, four per minimum interval.
        var sent = new List<long>();
        for (var i = 0; i <= 20; i++)
        {
            var target = Start.AddMilliseconds(100 + (10 * i));
            if (sent.Count > 0 && States("S1")[^1] is var last && last.SampleMs < sent[^1])
            {
                // The worker holds the silo's newest samples until a minimum interval after its last evaluation.
                var held = DateTimeOffset.FromUnixTimeMilliseconds(last.EvaluatedMs + MinIntervalMs);
                if (held <= target)
                {
                    await StepToAsync(held);
                    await WaitForAsync(() => States("S1")[^1].EvaluatedMs == held.ToUnixTimeMilliseconds(), $"the held samples of S1 evaluated at {held:O}");
                }
            }

            await StepToAsync(target);
            sent.Add(await SendAsync("S1"));
        }

        var end = DateTimeOffset.FromUnixTimeMilliseconds(States("S1")[^1].EvaluatedMs + MinIntervalMs);
        await StepToAsync(end);
        await WaitForAsync(() => States("S1").Any(s => s.SampleMs == sent[^1]), "a state with the stream's last sample");

        // One evaluation on the first message, then one per minimum interval, the last one for the last message.
        var states = States("S1");
        Assert.Equal([100, 140, 180, 220, 260, 300, 340], states.Select(s => s.EvaluatedMs - Start.ToUnixTimeMilliseconds()));

        // Every message's samples are in a state no later than the minimum interval after it was processed.
        foreach (var ts in sent)
        {
            var first = states.First(s => s.SampleMs >= ts);
            Assert.InRange(first.EvaluatedMs - ts, 0, MinIntervalMs);
        }
    }

    [Fact]
    public async Task ASiloWithoutNewSamplesIsStillEvaluatedEveryPublishIntervalOnTheServiceClock()
    {
        await WaitUntilWaitingAsync(Start.AddMilliseconds(PublishIntervalMs));
        await StepToAsync(Start.AddMilliseconds(PublishIntervalMs));
        await WaitForAsync(() => States("S2").Count == 1, "the first clock evaluation of S2");

        // S1 streams for the next two intervals, one message each 100 ms; S2 sends nothing.
        for (var i = 1; i < 20; i++)
        {
            await StepToAsync(Start.AddMilliseconds(PublishIntervalMs + (100 * i)));
            await SendAsync("S1");
        }

        await WaitUntilWaitingAsync(Start.AddMilliseconds(3 * PublishIntervalMs));
        await StepToAsync(Start.AddMilliseconds(3 * PublishIntervalMs));
        await WaitForAsync(() => States("S2").Count == 3, "three clock evaluations of S2");

        var s2 = States("S2");
        Assert.Equal([1, 2, 3], s2.Select(s => (s.EvaluatedMs - Start.ToUnixTimeMilliseconds()) / (double)PublishIntervalMs));
        Assert.All(s2, s => Assert.Null(s.SampleMs));

        // S1 was evaluated on its samples (one per message, 100 ms apart), not on the clock.
        Assert.Equal(19, States("S1").Count(s => s.SampleMs == s.EvaluatedMs));
    }

    [Fact]
    public async Task ASilosOpenIntervalsAreWrittenOnceItsFeedIsIdleNotWhileItsMessagesWaitInTheQueue()
    {
        var pipeline = _ingest.Pipelines.Single(p => p.Silo.Key == "brackenford/S1");
        var sink = (SiloWatch.Storage.IIntervalCheckpoint)_app.Services.GetRequiredService<SiloWatch.Storage.ITimeSeriesSink>();
        var series = _app.Services.GetRequiredService<SiloWatch.Storage.SeriesCatalog>().Sensor(pipeline.Silo.Index, pipeline.Silo.Sensors.Single(s => s.Id == "LC1").Index);
        await StepToAsync(Start.AddMilliseconds(1100));
        await SendAsync("S1");
        Assert.True(sink.CaptureInterval(series)?.Dirty, "LC1's second is open with the message's sample");

        // A message of S1 waits in the queue while its worker is busy elsewhere: five seconds pass on the clock.
        pipeline.Enqueuing();
        for (var t = 2000; t <= 6000; t += PublishIntervalMs)
        {
            await StepToAsync(Start.AddMilliseconds(t));
            await WaitUntilDoneWithAsync(Start.AddMilliseconds(t));
        }

        Assert.True(sink.CaptureInterval(series)?.Dirty, "LC1's second is still open while a message of S1 is queued");

        // The queue is empty again: the next clock evaluation finds the feed idle and writes the interval.
        pipeline.Dequeued();
        await StepToAsync(Start.AddMilliseconds(7000));
        await WaitUntilDoneWithAsync(Start.AddMilliseconds(7000));
        Assert.False(sink.CaptureInterval(series)?.Dirty, "LC1's second written once S1 is idle");
    }

    [Fact]
    public async Task AStopCutShortLeavesTheQueuedMessagesAndCheckpointsWhatWasProcessed()
    {
        var pipeline = _ingest.Pipelines.Single(p => p.Silo.Key == "brackenford/S1");
        await SendAsync("S1");
        const int Queued = 20_000; // far more than the worker processes before the cut
        for (var i = 0; i < Queued; i++)
        {
            pipeline.Enqueuing();
            Assert.True(Worker.Writer.TryWrite(Message(pipeline, 2 + i)));
        }

        await _ingest.DrainAsync(TimeSpan.Zero, CancellationToken.None).WaitAsync(TimeSpan.FromSeconds(60));

        Assert.True(_ingest.WorkersStopped);
        Assert.InRange(Worker.LeftQueued, 1, Queued);
        Assert.Equal(1 + Queued - Worker.LeftQueued, Worker.MessagesProcessed);
        Assert.Equal(0, pipeline.Queued);
        Assert.Equal(0, Worker.Depth);

        // The last checkpoint covers what was processed: the publisher's position is the last message processed.
        var checkpoint = Assert.IsType<CheckpointMark>(pipeline.LastCheckpoint);
        Assert.Equal(1 + Queued - Worker.LeftQueued, Assert.Single(checkpoint.Sequences).Highest);
    }

    [Fact]
    public async Task ACheckpointIsStoredAfterItsCaptureAndASiloWhoseCheckpointFailedIsCapturedAgain()
    {
        await SendAsync("S1");
        var pipeline = _ingest.Pipelines.Single(p => p.Silo.Key == "brackenford/S1");
        var journal = _app.Services.GetRequiredService<SiloWatch.Storage.Journal>();
        var sink = new HeldFlushSink();
        await using var acks = new AckWindow();
        var checkpoints = new IngestCheckpoints(journal, sink, acks, TimeSpan.FromSeconds(1), 1000);
        var before = pipeline.LastCheckpoint;
        Assert.True(pipeline.NeedsCheckpoint);

        // Captured at once; stored only once the store is flushed, and the worker is not held meanwhile.
        var failing = checkpoints.Begin([pipeline], [], 1, CancellationToken.None);
        Assert.False(failing.Done.IsCompleted);
        Assert.False(pipeline.NeedsCheckpoint);
        Assert.Null(journal.LoadSnapshot(pipeline.Silo.Key, IngestCheckpoints.Kind));
        var processed = Worker.MessagesProcessed;
        await SendAsync("S1");
        Assert.Equal(processed + 1, Worker.MessagesProcessed);

        sink.Complete(new IOException("the store is unreachable"));
        await Assert.ThrowsAsync<IOException>(() => failing.Done);
        Assert.False(checkpoints.Finish(failing));
        Assert.True(pipeline.NeedsCheckpoint); // its messages must not be acknowledged on a later checkpoint that leaves it out
        Assert.Same(before, pipeline.LastCheckpoint);
        Assert.Null(journal.LoadSnapshot(pipeline.Silo.Key, IngestCheckpoints.Kind));
        Assert.Equal(0, checkpoints.Saved);

        var saving = checkpoints.Begin([pipeline], [], 2, CancellationToken.None);
        Assert.False(saving.Done.IsCompleted);
        sink.Complete(null);
        await saving.Done;
        Assert.True(checkpoints.Finish(saving));
        Assert.Equal(2, Assert.IsType<CheckpointMark>(pipeline.LastCheckpoint).TakenMs);
        Assert.Contains("\"TakenMs\":2", journal.LoadSnapshot(pipeline.Silo.Key, IngestCheckpoints.Kind), StringComparison.Ordinal);
        Assert.Equal(1, checkpoints.Saved);
    }

    /// <summary>A store whose flush completes (or fails) only when the test says so.</summary>
    private sealed class HeldFlushSink : SiloWatch.Storage.ITimeSeriesSink
    {
        private TaskCompletionSource _flush = new(TaskCreationOptions.RunContinuationsAsynchronously);

        public SiloWatch.Storage.StorageHealth Health => new() { Backend = "held" };

        public void Write(SiloWatch.Storage.SeriesKey series, long timestampMs, ReadOnlySpan<double> values)
        {
        }

        public Task FlushAsync(CancellationToken ct) => _flush.Task;

        public void Complete(Exception? error)
        {
            var flush = _flush;
            _flush = new TaskCompletionSource(TaskCreationOptions.RunContinuationsAsynchronously);
            if (error is null)
            {
                flush.SetResult();
            }
            else
            {
                flush.SetException(error);
            }
        }

        public ValueTask DisposeAsync() => default;
    }

    private IngestMessage Message(SiloPipeline pipeline, long seq)
    {
        var now = _time.GetUtcNow().ToUnixTimeMilliseconds();
        var json = JsonSerializer.Serialize(new
        {
            pub = "schedule-gw",
            seq,
            ts = now,
            samples = new[] { new { sensor = "LC1", value = 0.8 + (0.001 * seq), unit = "mV/V" } },
        });
        return IngestMessage.Copy(pipeline, new ReadOnlySequence<byte>(Encoding.UTF8.GetBytes(json)), now, ticket: null);
    }

    /// <summary>Sends one message of the silo's load cells stamped now, and waits until the worker has processed it.</summary>
    private async Task<long> SendAsync(string silo)
    {
        var pipeline = _ingest.Pipelines.Single(p => p.Silo.Key == "brackenford/" + silo);
        var now = _time.GetUtcNow().ToUnixTimeMilliseconds();
        var seq = _seq[silo] = _seq.GetValueOrDefault(silo) + 1;
        var cells = pipeline.Silo.Sensors.Where(s => s.Id.StartsWith("LC", StringComparison.Ordinal)).Select(s => s.Id).ToList();
        var json = JsonSerializer.Serialize(new
        {
            pub = "schedule-gw",
            seq,
            ts = now,
            samples = cells.Select((c, i) => new { sensor = c, value = 0.8 + (0.01 * i) + (0.001 * seq), unit = "mV/V" }),
        });
        var processed = Worker.MessagesProcessed;
        var message = IngestMessage.Copy(pipeline, new ReadOnlySequence<byte>(Encoding.UTF8.GetBytes(json)), now, ticket: null);
        pipeline.Enqueuing();
        await Worker.Writer.WriteAsync(message);
        await WaitForAsync(() => Worker.MessagesProcessed > processed, $"message {seq} of {silo} processed");
        Assert.True(pipeline.SamplesAccepted >= cells.Count * seq, $"{silo}: the samples of message {seq} accepted");
        States(silo); // taken from the outbound queue now, before a newer state of the silo could take its place there
        return now;
    }

    /// <summary>The states published so far for the silo, in order (read from the outbound queue).</summary>
    private List<(string Silo, long EvaluatedMs, long? SampleMs)> States(string silo)
    {
        while (_outbound.TryRead(out var message))
        {
            if (!message.Topic.StartsWith("silowatch/v1/state/", StringComparison.Ordinal))
            {
                continue;
            }

            using var doc = JsonDocument.Parse(message.Payload);
            var root = doc.RootElement;
            var sample = root.GetProperty("sampleTs");
            _states.Add((root.GetProperty("silo").GetString()!, root.GetProperty("ts").GetDateTimeOffset().ToUnixTimeMilliseconds(),
                sample.ValueKind == JsonValueKind.Null ? null : sample.GetDateTimeOffset().ToUnixTimeMilliseconds()));
        }

        return [.. _states.Where(s => s.Silo == silo)];
    }

    /// <summary>Once the worker waits for its next due moment, moves the clock to <paramref name="at"/>.</summary>
    private async Task StepToAsync(DateTimeOffset at)
    {
        if (at > _time.GetUtcNow())
        {
            await WaitUntilWaitingAsync(null);
            States("");
            _time.Advance(at - _time.GetUtcNow());
        }
    }

    /// <summary>Waits until the worker has done what was due at <paramref name="at"/> and waits for something later.</summary>
    private Task WaitUntilDoneWithAsync(DateTimeOffset at) =>
        WaitForAsync(() => Worker.WaitingUntil is { } w && w > at, $"the worker done with {at:O}");

    /// <summary>Waits until the worker waits for its next due moment (<paramref name="until"/> when given): advancing the clock then wakes it.</summary>
    private Task WaitUntilWaitingAsync(DateTimeOffset? until) =>
        WaitForAsync(() => Worker.WaitingUntil is { } w && (until is null || w == until), $"the worker waiting until {until?.ToString("O") ?? "anything"}");

    private static Task WaitForAsync(Func<bool> condition, string what) => TestMqtt.WaitForAsync(condition, what);

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
