namespace SiloWatch.Monitoring.Alarms;

/// <summary>
/// Alarm floods per site: more than <see cref="AlarmEngineOptions.FloodCount"/> activations within
/// <see cref="AlarmEngineOptions.FloodWindow"/> across every silo of a site [M: ISA-18.2 flood, from memory], ending
/// when the activations in the window fall to <see cref="AlarmEngineOptions.FloodEndCount"/>. One instance is shared by
/// the alarm engines of all silos (each silo's engine runs on its own worker): thread-safe, and the start and the end
/// of a flood are each handed to exactly one caller, so the summary is journaled and published once per site.
/// </summary>
public sealed class AlarmFloodTracker(AlarmEngineOptions options)
{
    private readonly Lock _gate = new();
    private readonly Dictionary<string, Flood> _floods = new(StringComparer.Ordinal);

    public AlarmEngineOptions Options { get; } = options ?? throw new ArgumentNullException(nameof(options));

    /// <summary>
    /// Counts one activation on <paramref name="siteId"/> at <paramref name="nowMs"/>. Returns whether it falls inside a
    /// flood (publish the flood, not the alarm) and the flood's start transition when this activation began it.
    /// </summary>
    public (bool DuringFlood, AlarmTransition? Started) CountActivation(string siteId, long nowMs)
    {
        lock (_gate)
        {
            if (!_floods.TryGetValue(siteId, out var flood))
            {
                _floods[siteId] = flood = new Flood();
            }

            flood.Times.Enqueue(nowMs);
            Prune(flood, nowMs);
            if (flood.Active)
            {
                flood.DuringFlood++;
                return (true, null);
            }

            if (flood.Times.Count <= Options.FloodCount)
            {
                return (false, null);
            }

            flood.Active = true;
            flood.SinceMs = nowMs;
            flood.DuringFlood = 1;
            return (true, new AlarmTransition(nowMs, ConditionKeys.Flood(siteId), siteId, "", ConditionKeys.Flood(siteId), 1, AlarmStateName.Normal,
                AlarmStateName.Unacknowledged, flood.Times.Count, Options.FloodCount, "alarms", AlarmEngine.System, "", Message(flood.Times.Count)));
        }
    }

    /// <summary>The end of <paramref name="siteId"/>'s flood when the window has emptied enough at <paramref name="nowMs"/>; null otherwise (and to every later caller).</summary>
    public AlarmTransition? TryEnd(string siteId, long nowMs)
    {
        lock (_gate)
        {
            if (!_floods.TryGetValue(siteId, out var flood))
            {
                return null;
            }

            Prune(flood, nowMs);
            if (!flood.Active || flood.Times.Count > Options.FloodEndCount)
            {
                return null;
            }

            flood.Active = false;
            return new AlarmTransition(nowMs, ConditionKeys.Flood(siteId), siteId, "", ConditionKeys.Flood(siteId), 1, AlarmStateName.Unacknowledged,
                AlarmStateName.Normal, flood.Times.Count, Options.FloodCount, "alarms", AlarmEngine.System, $"{flood.DuringFlood} activations during the flood",
                "Alarm flood over.");
        }
    }

    /// <summary>The ongoing flood of a site as an alarm-list entry, or null.</summary>
    public AlarmState? Active(string siteId)
    {
        lock (_gate)
        {
            if (!_floods.TryGetValue(siteId, out var flood) || !flood.Active)
            {
                return null;
            }

            return new AlarmState(ConditionKeys.Flood(siteId), siteId, "", ConditionKeys.Flood(siteId), 1, AlarmStateName.Unacknowledged, true, false,
                flood.Times.Count, Options.FloodCount, "alarms", flood.SinceMs, flood.SinceMs, null, "", "", false, Message(flood.Times.Count));
        }
    }

    private string Message(int count) =>
        $"Alarm flood: {count} alarms within {Options.FloodWindow.TotalMinutes:0} min on this site. Work from the highest priority down; each alarm stays in the alarm list.";

    private void Prune(Flood flood, long nowMs)
    {
        var window = (long)Options.FloodWindow.TotalMilliseconds;
        while (flood.Times.Count > 0 && nowMs - flood.Times.Peek() > window)
        {
            flood.Times.Dequeue();
        }
    }

    private sealed class Flood
    {
        public Queue<long> Times { get; } = new();

        public bool Active;
        public long SinceMs;
        public int DuringFlood;
    }
}
