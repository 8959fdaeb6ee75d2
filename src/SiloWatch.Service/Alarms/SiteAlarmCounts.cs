namespace SiloWatch.Service.Alarms;

/// <summary>
/// Alarm counts of every silo, summed per site for the time-series store (the Alarms series is per
/// site while each silo is evaluated on its own worker). Thread-safe.
/// </summary>
public sealed class SiteAlarmCounts
{
    private readonly Lock _gate = new();
    private readonly Dictionary<string, Dictionary<string, (int Active, int Unacknowledged, int Shelved)>> _bySite = new(StringComparer.Ordinal);

    /// <summary>Records one silo's counts and returns its site's totals.</summary>
    public (int Active, int Unacknowledged, int Shelved) Update(string siteId, string siloId, int active, int unacknowledged, int shelved)
    {
        lock (_gate)
        {
            if (!_bySite.TryGetValue(siteId, out var silos))
            {
                _bySite[siteId] = silos = new Dictionary<string, (int, int, int)>(StringComparer.Ordinal);
            }

            silos[siloId] = (active, unacknowledged, shelved);
            int a = 0, u = 0, s = 0;
            foreach (var v in silos.Values)
            {
                a += v.Active;
                u += v.Unacknowledged;
                s += v.Shelved;
            }

            return (a, u, s);
        }
    }
}

/// <summary>Tells the status page's live streams that something changed; they wait on it with an upper bound.</summary>
public sealed class ChangeSignal
{
    private TaskCompletionSource _next = new(TaskCreationOptions.RunContinuationsAsynchronously);
    private long _version;

    public long Version => Interlocked.Read(ref _version);

    public void Notify()
    {
        Interlocked.Increment(ref _version);
        Interlocked.Exchange(ref _next, new TaskCompletionSource(TaskCreationOptions.RunContinuationsAsynchronously)).TrySetResult();
    }

    /// <summary>Completes at the next change after <paramref name="seenVersion"/>, or after <paramref name="atMost"/>.</summary>
    public async Task WaitAsync(long seenVersion, TimeSpan atMost, TimeProvider time, CancellationToken ct)
    {
        var next = Volatile.Read(ref _next).Task;
        if (Version != seenVersion)
        {
            return;
        }

        try
        {
            await next.WaitAsync(atMost, time, ct).ConfigureAwait(false);
        }
        catch (TimeoutException)
        {
            // an upper bound, not an error: the caller sends a heartbeat
        }
    }
}
