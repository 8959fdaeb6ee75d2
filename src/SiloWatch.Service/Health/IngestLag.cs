using SiloWatch.Service.Ingest;

namespace SiloWatch.Service.Health;

/// <summary>
/// How far behind one partition's worker is, on the service clock.
/// <para>
/// <see cref="LastDelayMs"/>: the message the worker took last waited this long from its receipt until it
/// was processed (exact, measured when it was taken). <see cref="WaitingAtMostMs"/>: while messages wait in
/// the queue, the oldest of them has waited at most this long (the time since the receipt of the last one
/// taken; every waiting message was received after it); 0 when none waits.
/// </para>
/// </summary>
public readonly record struct PartitionLag(int Partition, int Depth, long LastDelayMs, long LastTakenMs, long WaitingAtMostMs)
{
    /// <summary>Measures a worker's lag at <paramref name="nowMs"/> from its silos' last receipts (any thread).</summary>
    public static PartitionLag Of(PartitionWorker worker, long nowMs)
    {
        ArgumentNullException.ThrowIfNull(worker);
        long takenMs = long.MinValue, takenReceivedMs = 0, newestReceivedMs = 0;
        foreach (var pipeline in worker.Pipelines)
        {
            var receivedMs = pipeline.LastReceivedMs;
            newestReceivedMs = Math.Max(newestReceivedMs, receivedMs);
            var processedMs = pipeline.LastProcessedMs;
            if (processedMs > takenMs)
            {
                takenMs = processedMs;
                takenReceivedMs = receivedMs;
            }
        }

        // Read while the worker goes on: a message being processed already has its receipt and not yet its
        // processing time, so a difference below zero is such a moment, not a lag.
        var delayMs = takenMs == long.MinValue || takenReceivedMs <= 0 ? 0 : Math.Max(0, takenMs - takenReceivedMs);
        var depth = worker.Depth;
        var waitingMs = depth > 0 && newestReceivedMs > 0 ? Math.Max(0, nowMs - newestReceivedMs) : 0;
        return new PartitionLag(worker.Index, depth, delayMs, takenMs == long.MinValue ? 0 : takenMs, waitingMs);
    }
}

/// <summary>
/// Watches the partitions' ingest lag once a second and logs a warning, at most once a minute with the
/// number of checks left out, when a worker falls behind by more than <see cref="WarnAfter"/>: it took a
/// message that had waited longer, or it took none for two checks in a row while messages waited longer
/// (one check could fall on a message just arriving after a quiet spell, before the worker takes it). This is
/// the place the service being behind shows (with the queue depths and lags of /health); the silos' sensor
/// quality and alarms judge staleness against arrival and stay quiet (see <c>SiloMonitor.ArrivalsSeenUntil</c>).
/// </summary>
public sealed class IngestLagWatch(TelemetryIngest ingest, TimeProvider time, ILogger<IngestLagWatch> logger)
    : BackgroundService
{
    /// <summary>A lag beyond this is warned about.</summary>
    public static readonly TimeSpan WarnAfter = TimeSpan.FromSeconds(5);

    /// <summary>At most one warning line per this interval.</summary>
    public static readonly TimeSpan WarnInterval = TimeSpan.FromMinutes(1);

    private static readonly TimeSpan CheckInterval = TimeSpan.FromSeconds(1);

    private readonly Dictionary<int, (long TakenMs, bool Stalled)> _previous = [];
    private long _warnedMs = long.MinValue;
    private int _leftOut;

    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        using var timer = new PeriodicTimer(CheckInterval, time);
        try
        {
            while (await timer.WaitForNextTickAsync(stoppingToken).ConfigureAwait(false))
            {
                Check(time.GetUtcNow().ToUnixTimeMilliseconds());
            }
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
            // normal stop
        }
    }

    /// <summary>One check of every partition at <paramref name="nowMs"/>; returns the partitions found behind (tests call it directly).</summary>
    public IReadOnlyList<PartitionLag> Check(long nowMs)
    {
        var limitMs = (long)WarnAfter.TotalMilliseconds;
        var behind = new List<PartitionLag>();
        foreach (var worker in ingest.Workers)
        {
            var lag = PartitionLag.Of(worker, nowMs);
            var seen = _previous.TryGetValue(lag.Partition, out var before);
            var tookSince = !seen || lag.LastTakenMs != before.TakenMs;
            var stalled = !tookSince && lag.WaitingAtMostMs > limitMs;
            _previous[lag.Partition] = (lag.LastTakenMs, stalled);
            if ((tookSince && lag.LastDelayMs > limitMs) || (stalled && before.Stalled))
            {
                behind.Add(lag);
            }
        }

        if (behind.Count > 0)
        {
            Warn(behind, nowMs);
        }

        return behind;
    }

    private void Warn(List<PartitionLag> behind, long nowMs)
    {
        if (_warnedMs != long.MinValue && nowMs - _warnedMs < (long)WarnInterval.TotalMilliseconds)
        {
            _leftOut++;
            return;
        }

        var worst = behind.MaxBy(l => Math.Max(l.LastDelayMs, l.WaitingAtMostMs));
        logger.LogWarning(
            "Ingest is behind: {Partitions} partition(s) over {LimitS} s, worst partition {Partition} with {Depth} message(s) queued, " +
            "last message taken {DelayS} s after its receipt, the oldest waiting at most {WaitingS} s ({LeftOut} more such checks since the last line). " +
            "Sensor quality and alarms judge staleness against arrival, so no sensor is flagged for this; the service needs CPU or more partitions or instances",
            behind.Count, WarnAfter.TotalSeconds, worst.Partition, worst.Depth, worst.LastDelayMs / 1000.0, worst.WaitingAtMostMs / 1000.0, _leftOut);
        _warnedMs = nowMs;
        _leftOut = 0;
    }
}
