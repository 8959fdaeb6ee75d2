using SiloWatch.Service.Hosting;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Service.Health;

/// <summary>
/// GET /health: broker connection, queue depths and counters (200 when connected, 503 otherwise).
/// GET /api/silos: the last estimate of every silo this instance owns.
/// </summary>
public static class HealthEndpoints
{
    public static WebApplication MapSiloWatchHealth(this WebApplication app)
    {
        app.MapGet("/health", (TelemetryBridgeService bridge, TelemetryIngest ingest, OutboundQueue outbound,
            IngestCounters counters, BrokerEndpoint endpoint) =>
        {
            var connected = bridge.Client?.IsConnected ?? false;
            var broker = endpoint.Current;
            var report = new HealthReport(
                connected ? "healthy" : "degraded",
                new BrokerHealth(connected, broker?.Host ?? "", broker?.Port ?? 0, endpoint.Embedded, bridge.Client?.Reconnects ?? 0),
                [.. ingest.Workers.Select(w => new QueueHealth(w.Index, w.Depth, w.Pipelines.Count))],
                outbound.Count,
                counters.Snapshot());
            return Results.Json(report, statusCode: connected ? 200 : 503);
        });

        app.MapGet("/api/silos", (TelemetryIngest ingest) =>
            Results.Json(ingest.Pipelines.Select(p => new
            {
                site = p.Silo.SiteId,
                silo = p.Silo.SiloId,
                name = p.Silo.Options.Name,
                samplesAccepted = p.SamplesAccepted,
                samplesRejected = p.SamplesRejected,
                estimate = p.LastEstimate,
            })));
        return app;
    }
}

public sealed record HealthReport(string Status, BrokerHealth Broker, IReadOnlyList<QueueHealth> Queues, int OutboundDepth, IngestCountersSnapshot Counters);

public sealed record BrokerHealth(bool Connected, string Host, int Port, bool Embedded, long Reconnects);

public sealed record QueueHealth(int Partition, int Depth, int Silos);
