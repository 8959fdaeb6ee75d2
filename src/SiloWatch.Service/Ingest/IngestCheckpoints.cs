using System.Text.Json;
using System.Text.Json.Serialization;
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

    /// <summary>Checkpoints the silos of <paramref name="pipelines"/> that took messages, then acknowledges <paramref name="tickets"/> (cleared).</summary>
    public async Task SaveAsync(IReadOnlyList<SiloPipeline> pipelines, List<AckTicket> tickets, long nowMs, CancellationToken ct)
    {
        var captured = new List<(SiloPipeline Pipeline, IngestCheckpoint Checkpoint)>();
        foreach (var pipeline in pipelines)
        {
            if (pipeline.NeedsCheckpoint)
            {
                captured.Add((pipeline, pipeline.CaptureCheckpoint(nowMs)));
            }
        }

        await sink.FlushStoredAsync(ct).ConfigureAwait(false);
        if (captured.Count > 0)
        {
            journal.SaveSnapshots([.. captured.Select(c => (c.Pipeline.Silo.Key, Kind, JsonSerializer.Serialize(c.Checkpoint, Json)))]);
        }

        foreach (var (pipeline, checkpoint) in captured)
        {
            pipeline.LastCheckpoint = checkpoint;
        }

        Interlocked.Add(ref _saved, captured.Count);
        Acks.Complete(tickets);
        tickets.Clear();
    }

    /// <summary>The silo's saved checkpoint, or null (none, or unreadable: <paramref name="problem"/> says why).</summary>
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
