namespace SiloWatch.Messaging;

/// <summary>
/// Exponential backoff with jitter for reconnect attempts: attempt n waits
/// min(max, first·2^(n-1)) scaled by a random factor in [0.5, 1), so that many instances
/// restarted together do not hammer the broker in step.
/// </summary>
public static class ReconnectBackoff
{
    /// <param name="failedAttempts">Consecutive failed attempts so far (1 after the first failure).</param>
    /// <param name="first">Delay after the first failure (before jitter).</param>
    /// <param name="max">Largest delay (before jitter).</param>
    /// <param name="random01">A uniform random number in [0, 1).</param>
    public static TimeSpan Delay(int failedAttempts, TimeSpan first, TimeSpan max, double random01)
    {
        if (failedAttempts <= 0)
        {
            return TimeSpan.Zero;
        }

        // 2^30 times anything here is beyond any sane max: cap the exponent to avoid overflow.
        var exponent = Math.Min(failedAttempts - 1, 30);
        var ticks = Math.Min((double)max.Ticks, first.Ticks * Math.Pow(2, exponent));
        var jitter = 0.5 + (0.5 * Math.Clamp(random01, 0, 1));
        return TimeSpan.FromTicks((long)(ticks * jitter));
    }
}
