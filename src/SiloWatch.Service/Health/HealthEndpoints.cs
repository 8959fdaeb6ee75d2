using SiloWatch.Service.Hosting;
using SiloWatch.Service.Ingest;
using SiloWatch.Storage;

namespace SiloWatch.Service.Health;

/// <summary>
/// GET /health: broker connection, queue depths and ingest lag per partition, counters and messages the broker refused (200 when
/// connected, the store reachable and no refusal in the last <see cref="PublishRefusals.HealthWindow"/>; 503 otherwise).
/// GET /api/silos: the last estimate of every silo this instance owns.
/// </summary>
public static class HealthEndpoints
{
    public static WebApplication MapSiloWatchHealth(this WebApplication app)
    {
        app.MapGet("/health", (TelemetryBridgeService bridge, TelemetryIngest ingest, OutboundQueue outbound,
            IngestCounters counters, PublishRefusals refusals, BrokerEndpoint endpoint, ITimeSeriesSink sink, TimeProvider time) =>
        {
            var connected = bridge.Client?.IsConnected ?? false;
            var store = sink.Health;
            var refused = refusals.Snapshot();
            var healthy = connected && store.StoreReachable && !store.SpoolNearlyFull && !refused.Recent;
            var broker = endpoint.Current;
            var report = new HealthReport(
                healthy ? "healthy" : "degraded",
                new BrokerHealth(connected, broker?.Host ?? "", broker?.Port ?? 0, endpoint.Embedded, bridge.Client?.Reconnects ?? 0),
                [.. ingest.Workers.Select(w => QueueHealth.Of(w, time.GetUtcNow().ToUnixTimeMilliseconds()))],
                outbound.Count,
                counters.Snapshot(),
                new AckHealth(ingest.Acks.Pending, ingest.Workers.Sum(w => w.Uncheckpointed), ingest.Acks.Acknowledged, ingest.Acks.LeftForRedelivery, ingest.CheckpointsSaved),
                refused,
                store);
            return Results.Json(report, statusCode: healthy ? 200 : 503);
        });

        // The estimate in the state message's form: a number that cannot be known is null (JSON has no NaN or infinity).
        app.MapGet("/api/silos", (TelemetryIngest ingest, Microsoft.Extensions.Options.IOptions<InstanceOptions> instance) =>
            Results.Json(ingest.Pipelines.Select(p => new
            {
                site = p.Silo.SiteId,
                silo = p.Silo.SiloId,
                name = p.Silo.Options.Name,
                samplesAccepted = p.SamplesAccepted,
                samplesRejected = p.SamplesRejected,
                estimate = p.LastEstimate is { } e ? System.Text.Json.JsonDocument.Parse(StatePayload.Encode(e, instance.Value.Id)).RootElement : (System.Text.Json.JsonElement?)null,
                checkpoint = p.LastCheckpoint is { } c
                    ? new { takenMs = c.TakenMs, publishers = c.Sequences.Select(q => new { publisher = q.Publisher, highestSeq = q.Highest }) }
                    : null,
            })));
        return app;
    }
}

public sealed record HealthReport(string Status, BrokerHealth Broker, IReadOnlyList<QueueHealth> Queues, int OutboundDepth, IngestCountersSnapshot Counters,
    AckHealth Acknowledgements, PublishRefusalsSnapshot PublishRefusals, StorageHealth Store);

/// <summary>
/// Messages received and not yet acknowledged (waiting in queues or for a checkpoint), processed and
/// waiting for their checkpoint, acknowledged since start, left for the broker to redeliver, and
/// silo checkpoints saved.
/// </summary>
public sealed record AckHealth(int Pending, int AwaitingCheckpoint, long Acknowledged, long LeftForRedelivery, long CheckpointsSaved);

public sealed record BrokerHealth(bool Connected, string Host, int Port, bool Embedded, long Reconnects);

/// <summary>
/// One partition: messages queued, silos, and how far behind its worker is (<see cref="PartitionLag"/>): the last
/// message taken waited <paramref name="LastDelayMs"/> from its receipt, and the oldest still waiting has waited at most
/// <paramref name="WaitingAtMostMs"/> (0 when none waits).
/// </summary>
public sealed record QueueHealth(int Partition, int Depth, int Silos, long LastDelayMs, long WaitingAtMostMs)
{
    public static QueueHealth Of(PartitionWorker worker, long nowMs)
    {
        var lag = PartitionLag.Of(worker, nowMs);
        return new QueueHealth(worker.Index, lag.Depth, worker.Pipelines.Count, lag.LastDelayMs, lag.WaitingAtMostMs);
    }
}
