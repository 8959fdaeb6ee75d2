using System.Text.Json;
using System.Text.Json.Serialization;
using SiloWatch.Messaging;
using SiloWatch.Storage;

namespace SiloWatch.Service.Ingest;

/// <summary>
/// Saves the silos' resume points. A checkpoint of a worker's silos: capture each silo that took a
/// message since the last one, flush the store (every point emitted so far stored or spooled),
/// save the captures in the journal, and only then acknowledge the messages they cover. A kill at
/// any moment therefore leaves the broker holding every message not covered by a saved checkpoint,
/// and the restarted instance resumes from that checkpoint: what it is sent again is processed
/// once more from the same state (the store receives the same points again, which it keeps once),
/// or recognised as a duplicate by the saved sequence positions.
/// </summary>
public sealed class IngestCheckpoints(Journal journal, ITimeSeriesSink sink, AckWindow acks, TimeSpan interval, int maxMessages)
{
    /// <summary>Snapshot kind of a silo's checkpoint in the journal.</summary>
    public const string Kind = "ingest-checkpoint";

    // Snapshots hold NaN and infinities (no mass before a tare, empty accumulators).
    internal static readonly JsonSerializerOptions Json = new()
    {
        NumberHandling = JsonNumberHandling.AllowNamedFloatingPointLiterals,
    };

    /// <summary>Longest time a processed message waits for its checkpoint. Default 1 s.</summary>
    public TimeSpan Interval { get; } = interval;

    /// <summary>A worker checkpoints at the latest once this many messages wait for it (the broker's receive window). Default 1000.</summary>
    public int MaxMessages { get; } = maxMessages;

    public AckWindow Acks { get; } = acks;

    public long Saved => Interlocked.Read(ref _saved);

    private long _saved;

    /// <summary>
    /// Begins a checkpoint of the silos of <paramref name="pipelines"/> that took messages: captures
    /// them now (on the worker, so the capture is consistent), takes <paramref name="tickets"/> over
    /// (the list is cleared) and starts writing them out, the store flush and the journal save, which run while the
    /// worker goes on processing. <see cref="Finish"/> acknowledges the tickets once that is done.
    /// </summary>
    public PendingCheckpoint Begin(IReadOnlyList<SiloPipeline> pipelines, List<AckTicket> tickets, long nowMs, CancellationToken ct)
    {
        ArgumentNullException.ThrowIfNull(pipelines);
        ArgumentNullException.ThrowIfNull(tickets);
        var captured = new List<(SiloPipeline Pipeline, IngestCheckpoint Checkpoint)>();
        var marks = new List<(SiloPipeline Pipeline, CheckpointMark Mark)>();
        foreach (var pipeline in pipelines)
        {
            if (pipeline.NeedsCheckpoint)
            {
                var checkpoint = pipeline.CaptureCheckpoint(nowMs);
                captured.Add((pipeline, checkpoint));
                marks.Add((pipeline, CheckpointMark.Of(checkpoint)));
            }
        }

        var taken = new List<AckTicket>(tickets);
        tickets.Clear();

        // The store flush starts now, so it covers what was written before the capture. A capture is a copy
        // (the worker goes on changing the silo), so writing it out is not the worker's job. Only the serialiser
        // holds the captures: once written out they are garbage while still young, where collecting them is
        // cheap. Held until the store flush and the save (a second or more), they would reach the oldest generation
        // and die there, 400 silos' worth per second, which kept the heap twice the size of what it holds.
        var flushing = sink.FlushStoredAsync(ct);
        var writing = Task.Run(() => Serialize(captured), CancellationToken.None);
        return new PendingCheckpoint(marks, taken, StoreAsync(flushing, writing));
    }

    /// <summary>
    /// After <see cref="PendingCheckpoint.Done"/> completed: when it succeeded, records the silos'
    /// checkpoints and acknowledges the tickets (true); otherwise marks the silos as needing a
    /// checkpoint again, so the next one covers them before their messages are acknowledged (false;
    /// the tickets are the caller's again).
    /// </summary>
    public bool Finish(PendingCheckpoint pending)
    {
        ArgumentNullException.ThrowIfNull(pending);
        if (!pending.Done.IsCompleted)
        {
            throw new InvalidOperationException("the checkpoint is still being stored");
        }

        if (!pending.Done.IsCompletedSuccessfully)
        {
            foreach (var (pipeline, _) in pending.Captured)
            {
                pipeline.CheckpointNotSaved();
            }

            return false;
        }

        foreach (var (pipeline, mark) in pending.Captured)
        {
            pipeline.LastCheckpoint = mark;
        }

        Interlocked.Add(ref _saved, pending.Captured.Count);
        Acks.Complete(pending.Tickets);
        return true;
    }

    private static List<(string SiloKey, string Kind, byte[] Utf8Json)> Serialize(List<(SiloPipeline Pipeline, IngestCheckpoint Checkpoint)> captured)
    {
        var saves = new List<(string SiloKey, string Kind, byte[] Utf8Json)>(captured.Count);
        foreach (var (pipeline, checkpoint) in captured)
        {
            saves.Add((pipeline.Silo.Key, Kind, JsonSerializer.SerializeToUtf8Bytes(checkpoint, Json)));
        }

        captured.Clear(); // the task holding this list lives until the save; the captures need not

        return saves;
    }

    private async Task StoreAsync(Task flushing, Task<List<(string SiloKey, string Kind, byte[] Utf8Json)>> writing)
    {
        await flushing.ConfigureAwait(false);
        var saves = await writing.ConfigureAwait(false);
        if (saves.Count > 0)
        {
            journal.SaveSnapshots(saves);
        }
    }

    public IngestCheckpoint? Load(string siloKey, out string? problem)
    {
        problem = null;
        var json = journal.LoadSnapshot(siloKey, Kind);
        if (json is null)
        {
            return null;
        }

        try
        {
            var checkpoint = JsonSerializer.Deserialize<IngestCheckpoint>(json, Json);
            if (checkpoint is not { Version: IngestCheckpoint.CurrentVersion })
            {
                problem = $"checkpoint version {checkpoint?.Version} is not {IngestCheckpoint.CurrentVersion}";
                return null;
            }

            return checkpoint;
        }
        catch (Exception ex) when (ex is JsonException or NotSupportedException or ArgumentException)
        {
            problem = "checkpoint could not be read: " + ex.Message;
            return null;
        }
    }
}

/// <summary>A checkpoint begun by <see cref="IngestCheckpoints.Begin"/>: its store flush and journal save in <see cref="Done"/>.</summary>
public sealed class PendingCheckpoint
{
    internal PendingCheckpoint(List<(SiloPipeline Pipeline, CheckpointMark Mark)> captured, List<AckTicket> tickets, Task done)
    {
        Captured = captured;
        Tickets = tickets;
        Done = done;
    }

    /// <summary>The silos captured, each with what is kept of its checkpoint once saved.</summary>
    internal List<(SiloPipeline Pipeline, CheckpointMark Mark)> Captured { get; }

    /// <summary>The messages this checkpoint covers, acknowledged once it is saved.</summary>
    public List<AckTicket> Tickets { get; }

    /// <summary>The store flushed and the captures saved in the journal; faulted or cancelled when not.</summary>
    public Task Done { get; }
}

/// <summary>What a silo keeps of its last saved checkpoint (the capture itself is in the journal): when it was taken and the publishers' positions.</summary>
public sealed record CheckpointMark(long TakenMs, IReadOnlyList<PublisherPosition> Sequences)
{
    public static CheckpointMark Of(IngestCheckpoint checkpoint)
    {
        ArgumentNullException.ThrowIfNull(checkpoint);
        return new(checkpoint.TakenMs, checkpoint.Sequences);
    }
}
