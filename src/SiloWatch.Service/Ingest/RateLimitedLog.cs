namespace SiloWatch.Service.Ingest;

/// <summary>
/// Logs the first event of a kind at once, then at most one line per interval and kind, saying how
/// many were suppressed, so a flood of bad input cannot flood the log.
/// </summary>
public sealed class RateLimitedLog(ILogger logger, TimeProvider time, TimeSpan interval)
{
    private readonly Dictionary<string, (long LastTicks, long Suppressed)> _kinds = new(StringComparer.Ordinal);
    private readonly Lock _gate = new();

    public void Warn(string kind, string site, string silo, string? sensor, string detail)
    {
        long suppressed;
        lock (_gate)
        {
            var now = time.GetTimestamp();
            if (_kinds.TryGetValue(kind, out var state) && time.GetElapsedTime(state.LastTicks, now) < interval)
            {
                _kinds[kind] = (state.LastTicks, state.Suppressed + 1);
                return;
            }

            suppressed = state.Suppressed;
            _kinds[kind] = (now, 0);
        }

        logger.LogWarning(
            "Rejected telemetry ({Reason}) for {Site}/{Silo} sensor {Sensor}: {Detail} ({Suppressed} more of this kind since the last line)",
            kind, site, silo, sensor ?? "-", detail, suppressed);
    }
}
