namespace SiloWatch.Service.Alarms;

/// <summary>
/// The time one silo's alarm engine sees: set by whoever holds the silo's lock just before the
/// engine is called, so that alarm timers, transitions and the wall watch use the same moment
/// (the wall clock, or the samples' own time in a replay).
/// </summary>
public sealed class SiloClock(long startMs) : TimeProvider
{
    private long _nowMs = startMs;

    public long NowMs => Volatile.Read(ref _nowMs);

    public void Set(long nowMs) => Volatile.Write(ref _nowMs, nowMs);

    public override DateTimeOffset GetUtcNow() => DateTimeOffset.FromUnixTimeMilliseconds(NowMs);
}
