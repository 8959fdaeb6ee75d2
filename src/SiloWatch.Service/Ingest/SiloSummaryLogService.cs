using System.Globalization;
using Microsoft.Extensions.Options;
using SiloWatch.Service.Hosting;

namespace SiloWatch.Service.Ingest;

/// <summary>Writes one line per silo to the log every LogInterval: what the operator would watch.</summary>
public sealed class SiloSummaryLogService(TelemetryIngest ingest, IOptions<InstanceOptions> options, TimeProvider time,
    ILogger<SiloSummaryLogService> logger) : BackgroundService
{
    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        var interval = options.Value.LogInterval;
        if (interval <= TimeSpan.Zero)
        {
            return;
        }

        using var timer = new PeriodicTimer(interval, time);
        try
        {
            while (await timer.WaitForNextTickAsync(stoppingToken).ConfigureAwait(false))
            {
                foreach (var pipeline in ingest.Pipelines)
                {
                    var e = pipeline.LastEstimate;
                    if (e is null)
                    {
                        continue;
                    }

                    logger.LogInformation(
                        "{Silo} {Name}: {MassT} t [{LowT}..{HighT} t 95%], level {LevelM} m, {Percent}% full, rate {RateTPerH} t/h, {Quality} ({Reason}), {Method}",
                        pipeline.Silo.Key, pipeline.Silo.Options.Name,
                        F(e.MassKg / 1000, "0.0"), F(e.MassLow95Kg / 1000, "0.0"), F(e.MassHigh95Kg / 1000, "0.0"),
                        F(e.LevelM, "0.00"), F(e.PercentFull, "0.0"), F(e.RateKgPerS * 3.6, "0.0"),
                        e.Quality, e.QualityReason, e.Method);
                }
            }
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
            // normal stop
        }
    }

    private static string F(double value, string format) =>
        double.IsFinite(value) ? value.ToString(format, CultureInfo.InvariantCulture) : "n/a";
}
