using SiloWatch.Monitoring.Wall;

namespace SiloWatch.Monitoring.Alarms;

/// <summary>Alarm engine settings. Defaults stated on each property.</summary>
public sealed class AlarmEngineOptions
{
    public const string SectionName = "Alarms";

    /// <summary>More activations than this within <see cref="FloodWindow"/> on a site is a flood. Default 10 (ISA-18.2 benchmark [M]).</summary>
    public int FloodCount { get; set; } = 10;

    /// <summary>Default 10 min [M: ISA-18.2 flood definition, from memory].</summary>
    public TimeSpan FloodWindow { get; set; } = TimeSpan.FromMinutes(10);

    /// <summary>The flood ends when the activations within the window fall to this or fewer. Default 5.</summary>
    public int FloodEndCount { get; set; } = 5;

    /// <summary>Longest shelve an operator may set. Default 24 h.</summary>
    public TimeSpan MaxShelveDuration { get; set; } = TimeSpan.FromHours(24);
}

/// <summary>
/// Alarm states and transitions after the ISA-18.2 / IEC 62682 state model [M: from memory of
/// ISA-18.2-2016 §11]: normal, unacknowledged, acknowledged, returned-to-normal unacknowledged,
/// latched, shelved (time-limited), suppressed by design (outside the discharge states a definition is
/// meant for), out of service; on-delay, off-delay and deadband; a flood summary per site, counted over
/// every silo of the site when the engines share an <see cref="AlarmFloodTracker"/>. Every change
/// is returned as an <see cref="AlarmTransition"/> for the journal. Every timer runs on the injected
/// <see cref="TimeProvider"/>. One instance per site or per silo, called from one thread.
/// <para>
/// A value that is NaN (unknown) holds the alarm and its timers. Leaving the states a definition is
/// enabled in ends the condition (an active alarm returns to normal, or latches) and then suppresses it;
/// operator states (returned-to-normal unacknowledged, latched, shelved, out of service) stay.
/// </para>
/// </summary>
public sealed class AlarmEngine
{
    public const string System = "system";

    private readonly TimeProvider _time;
    private readonly AlarmEngineOptions _options;
    private readonly Dictionary<string, Entry> _byId = new(StringComparer.Ordinal);
    private readonly Dictionary<string, List<Entry>> _byCondition = new(StringComparer.Ordinal);
    private readonly List<Entry> _entries = [];
    private readonly AlarmFloodTracker _floods;
    private readonly string[] _sites;
    private readonly Dictionary<string, long> _announcedFloods = new(StringComparer.Ordinal);

    /// <param name="floods">
    /// The flood count shared with the engines of the other silos of the same sites (one per service); null counts
    /// this engine's own activations only.
    /// </param>
    public AlarmEngine(IEnumerable<AlarmDefinition> definitions, TimeProvider time, AlarmEngineOptions? options = null, AlarmFloodTracker? floods = null)
    {
        ArgumentNullException.ThrowIfNull(definitions);
        ArgumentNullException.ThrowIfNull(time);
        _time = time;
        _options = options ?? floods?.Options ?? new AlarmEngineOptions();
        _floods = floods ?? new AlarmFloodTracker(_options);
        var now = NowMs();
        foreach (var d in definitions)
        {
            if (d.Priority is < 1 or > 4)
            {
                throw new ArgumentException($"alarm {d.Id}: priority {d.Priority} is not 1..4", nameof(definitions));
            }

            if (!(d.Deadband >= 0) || d.OnDelay < TimeSpan.Zero || d.OffDelay < TimeSpan.Zero)
            {
                throw new ArgumentException($"alarm {d.Id}: deadband and delays must not be negative", nameof(definitions));
            }

            var e = new Entry(d) { SinceMs = now };
            if (!_byId.TryAdd(d.Id, e))
            {
                throw new ArgumentException($"alarm id {d.Id} is defined twice", nameof(definitions));
            }

            _entries.Add(e);
            if (!_byCondition.TryGetValue(d.Condition, out var list))
            {
                _byCondition[d.Condition] = list = [];
            }

            list.Add(e);
        }

        _sites = [.. _entries.Select(e => e.Definition.SiteId).Distinct(StringComparer.Ordinal)];
    }

    public IReadOnlyList<AlarmDefinition> Definitions => [.. _entries.Select(e => e.Definition)];

    /// <summary>Every alarm that is not normal and not suppressed by design, plus an ongoing site flood this engine began: the retained alarms topic.</summary>
    public IReadOnlyList<AlarmState> Active
    {
        get
        {
            var list = _entries.Where(e => e.State is not (AlarmStateName.Normal or AlarmStateName.SuppressedByDesign)).Select(StateOf).ToList();
            foreach (var (site, since) in _announcedFloods)
            {
                // A site's flood is listed by the engine whose activation began it, so it appears once per site.
                if (_floods.Active(site) is { } flood && flood.SinceMs == since)
                {
                    list.Add(flood);
                }
            }

            return list;
        }
    }

    /// <summary>The state of one alarm.</summary>
    public AlarmState Get(string alarmId) => StateOf(Find(alarmId));

    /// <summary>Applies the values of this moment; returns the transitions they caused (and shelve expiries).</summary>
    public IReadOnlyList<AlarmTransition> Evaluate(IReadOnlyList<ConditionValue> values)
    {
        ArgumentNullException.ThrowIfNull(values);
        var now = NowMs();
        var output = new List<AlarmTransition>();
        foreach (var e in _entries)
        {
            if (e.State == AlarmStateName.Shelved && e.ShelvedUntilMs <= now)
            {
                output.Add(Unshelved(e, now, System, "shelve expired"));
            }
        }

        foreach (var v in values)
        {
            if (!_byCondition.TryGetValue(v.Condition, out var entries))
            {
                continue;
            }

            foreach (var e in entries)
            {
                Apply(e, v, now, output);
            }
        }

        foreach (var site in _sites)
        {
            // Whichever engine of the site looks first after the flood has eased reports its end, once.
            if (_floods.TryEnd(site, now) is { } end)
            {
                output.Add(end);
            }
        }

        return output;
    }

    /// <summary>Operator acknowledgement. Null when there was nothing to acknowledge.</summary>
    public AlarmTransition? Acknowledge(string alarmId, string by, string? comment = null)
    {
        var e = Find(alarmId);
        RequireUser(by);
        var now = NowMs();
        switch (e.State)
        {
            case AlarmStateName.Unacknowledged:
                e.Acknowledged = true;
                return Move(e, AlarmStateName.Acknowledged, now, by, comment ?? "");
            case AlarmStateName.ReturnedToNormalUnacknowledged:
                e.Acknowledged = true;
                return Move(e, AlarmStateName.Normal, now, by, comment ?? "");
            case AlarmStateName.Latched when !e.Acknowledged:
                e.Acknowledged = true;
                return Move(e, AlarmStateName.Latched, now, by, comment ?? "acknowledged; still latched until reset");
            default:
                return null;
        }
    }

    /// <summary>Shelves an alarm for a limited time (at most <see cref="AlarmEngineOptions.MaxShelveDuration"/>), with the reason.</summary>
    public AlarmTransition? Shelve(string alarmId, string by, TimeSpan duration, string reason)
    {
        var e = Find(alarmId);
        RequireUser(by);
        ArgumentException.ThrowIfNullOrWhiteSpace(reason);
        if (duration <= TimeSpan.Zero || duration > _options.MaxShelveDuration)
        {
            throw new ArgumentOutOfRangeException(nameof(duration), duration, $"a shelve lasts more than zero and at most {_options.MaxShelveDuration}");
        }

        if (e.State is AlarmStateName.OutOfService)
        {
            return null;
        }

        var now = NowMs();
        e.ShelvedUntilMs = now + (long)duration.TotalMilliseconds;
        e.ShelvedBy = by;
        e.ShelveReason = reason;
        if (e.State == AlarmStateName.Shelved)
        {
            return Move(e, AlarmStateName.Shelved, now, by, $"shelve extended to {DateTimeOffset.FromUnixTimeMilliseconds(e.ShelvedUntilMs.Value):u}: {reason}");
        }

        return Move(e, AlarmStateName.Shelved, now, by, $"shelved until {DateTimeOffset.FromUnixTimeMilliseconds(e.ShelvedUntilMs.Value):u}: {reason}");
    }

    /// <summary>Ends a shelve before its expiry; the alarm is re-evaluated (in alarm: unacknowledged).</summary>
    public AlarmTransition? Unshelve(string alarmId, string by)
    {
        var e = Find(alarmId);
        RequireUser(by);
        return e.State == AlarmStateName.Shelved ? Unshelved(e, NowMs(), by, "unshelved") : null;
    }

    /// <summary>Resets a latched alarm whose condition has cleared. Null when it is not latched or still in alarm.</summary>
    public AlarmTransition? Reset(string alarmId, string by)
    {
        var e = Find(alarmId);
        RequireUser(by);
        if (e.State != AlarmStateName.Latched || e.InAlarm)
        {
            return null;
        }

        e.Acknowledged = true;
        return Move(e, AlarmStateName.Normal, NowMs(), by, "reset");
    }

    /// <summary>Takes an alarm out of service (maintenance) or returns it; returned alarms start afresh from normal.</summary>
    public AlarmTransition? SetOutOfService(string alarmId, string by, bool outOfService, string? comment = null)
    {
        var e = Find(alarmId);
        RequireUser(by);
        var now = NowMs();
        if (outOfService)
        {
            if (e.State == AlarmStateName.OutOfService)
            {
                return null;
            }

            e.InAlarm = false;
            e.ResetTimers();
            return Move(e, AlarmStateName.OutOfService, now, by, comment ?? "out of service");
        }

        if (e.State != AlarmStateName.OutOfService)
        {
            return null;
        }

        e.InAlarm = false;
        e.Acknowledged = true;
        e.ResetTimers();
        return Move(e, AlarmStateName.Normal, now, by, comment ?? "returned to service");
    }

    /// <summary>Every alarm's state, for a restart.</summary>
    public AlarmSnapshot Snapshot() => new(AlarmSnapshot.CurrentVersion, NowMs(), [.. _entries.Select(StateOf)]);

    /// <summary>Restores states from a snapshot (timers start afresh); returns what could not be restored.</summary>
    public IReadOnlyList<string> Restore(AlarmSnapshot snapshot)
    {
        ArgumentNullException.ThrowIfNull(snapshot);
        var problems = new List<string>();
        if (snapshot.Version != AlarmSnapshot.CurrentVersion)
        {
            problems.Add($"alarm snapshot version {snapshot.Version} is not {AlarmSnapshot.CurrentVersion}: nothing restored");
            return problems;
        }

        foreach (var s in snapshot.States)
        {
            if (!_byId.TryGetValue(s.AlarmId, out var e))
            {
                problems.Add($"alarm {s.AlarmId} is no longer defined: its state ({s.State}) was dropped");
                continue;
            }

            e.State = s.State;
            e.InAlarm = s.InAlarm;
            e.Acknowledged = s.Acknowledged;
            e.Value = s.Value ?? double.NaN;
            e.SinceMs = s.SinceMs;
            e.ActivatedMs = s.ActivatedMs;
            e.ShelvedUntilMs = s.ShelvedUntilMs;
            e.ShelvedBy = s.ShelvedBy;
            e.ShelveReason = s.ShelveReason;
            e.ResetTimers();
        }

        return problems;
    }

    private void Apply(Entry e, in ConditionValue v, long now, List<AlarmTransition> output)
    {
        var d = e.Definition;
        if (e.State == AlarmStateName.OutOfService)
        {
            return;
        }

        if (double.IsFinite(v.Value))
        {
            e.Value = v.Value;
        }

        if (v.Detail.Length > 0)
        {
            e.Detail = v.Detail;
        }

        var enabled = d.EnabledIn is null || d.EnabledIn.Contains(v.SiloState);
        if (!enabled)
        {
            e.ResetTimers();
            if (e.InAlarm)
            {
                Clear(e, now, output, "outside the state it is meant for");
            }

            if (e.State == AlarmStateName.Normal)
            {
                output.Add(Move(e, AlarmStateName.SuppressedByDesign, now, System, $"suppressed by design while {v.SiloState.ToString().ToLowerInvariant()}"));
            }

            return;
        }

        if (e.State == AlarmStateName.SuppressedByDesign)
        {
            e.ResetTimers();
            output.Add(Move(e, AlarmStateName.Normal, now, System, $"enabled while {v.SiloState.ToString().ToLowerInvariant()}"));
        }

        if (!double.IsFinite(v.Value))
        {
            return;
        }

        var high = d.Direction == AlarmDirection.High;
        var beyond = high ? v.Value >= d.Setpoint : v.Value <= d.Setpoint;
        var clear = high ? v.Value < d.Setpoint - d.Deadband : v.Value > d.Setpoint + d.Deadband;
        if (!e.InAlarm)
        {
            if (!beyond)
            {
                e.OnSinceMs = long.MinValue;
                return;
            }

            if (e.OnSinceMs == long.MinValue)
            {
                e.OnSinceMs = now;
            }

            if (now - e.OnSinceMs >= (long)d.OnDelay.TotalMilliseconds)
            {
                Activate(e, now, output);
            }

            return;
        }

        if (!clear)
        {
            e.OffSinceMs = long.MinValue;
            return;
        }

        if (e.OffSinceMs == long.MinValue)
        {
            e.OffSinceMs = now;
        }

        if (now - e.OffSinceMs >= (long)d.OffDelay.TotalMilliseconds)
        {
            Clear(e, now, output, "");
        }
    }

    private void Activate(Entry e, long now, List<AlarmTransition> output)
    {
        e.InAlarm = true;
        e.ResetTimers();
        e.ActivatedMs = now;
        if (e.State == AlarmStateName.Shelved)
        {
            // Shelved: tracked, not announced.
            return;
        }

        e.Acknowledged = false;
        var flood = CountActivation(e.Definition.SiteId, now, output);
        output.Add(Move(e, AlarmStateName.Unacknowledged, now, System, "", flood));
    }

    private void Clear(Entry e, long now, List<AlarmTransition> output, string comment)
    {
        e.InAlarm = false;
        e.ResetTimers();
        var latching = e.Definition.Latching;
        switch (e.State)
        {
            case AlarmStateName.Unacknowledged:
                output.Add(Move(e, latching ? AlarmStateName.Latched : AlarmStateName.ReturnedToNormalUnacknowledged, now, System, comment));
                break;
            case AlarmStateName.Acknowledged:
                output.Add(Move(e, latching ? AlarmStateName.Latched : AlarmStateName.Normal, now, System, comment));
                break;
        }
    }

    private AlarmTransition Unshelved(Entry e, long now, string by, string comment)
    {
        e.ShelvedUntilMs = null;
        e.ShelvedBy = "";
        e.ShelveReason = "";
        if (e.InAlarm)
        {
            e.Acknowledged = false;
            return Move(e, AlarmStateName.Unacknowledged, now, by, comment + "; still in alarm");
        }

        e.Acknowledged = true;
        return Move(e, AlarmStateName.Normal, now, by, comment);
    }

    private bool CountActivation(string site, long now, List<AlarmTransition> output)
    {
        var (duringFlood, started) = _floods.CountActivation(site, now);
        if (started is not null)
        {
            _announcedFloods[site] = now;
            output.Add(started);
        }

        return duringFlood;
    }

    private static AlarmTransition Move(Entry e, AlarmStateName to, long now, string by, string comment, bool duringFlood = false)
    {
        var from = e.State;
        e.State = to;
        e.SinceMs = now;
        var d = e.Definition;
        var message = e.Detail.Length > 0 ? $"{d.Message} ({e.Detail})" : d.Message;
        return new AlarmTransition(now, d.Id, d.SiteId, d.SiloId, d.Condition, d.Priority, from, to, Known(e.Value), d.Setpoint, d.Unit, by, comment, message, duringFlood);
    }

    private static AlarmState StateOf(Entry e)
    {
        var d = e.Definition;
        return new AlarmState(d.Id, d.SiteId, d.SiloId, d.Condition, d.Priority, e.State, e.InAlarm, e.Acknowledged, Known(e.Value), d.Setpoint, d.Unit,
            e.SinceMs, e.ActivatedMs, e.ShelvedUntilMs, e.ShelvedBy, e.ShelveReason, e.State == AlarmStateName.OutOfService, d.Message);
    }

    private static double? Known(double value) => double.IsFinite(value) ? value : null;

    private Entry Find(string alarmId)
    {
        ArgumentNullException.ThrowIfNull(alarmId);
        return _byId.TryGetValue(alarmId, out var e) ? e : throw new KeyNotFoundException($"no alarm {alarmId}");
    }

    private static void RequireUser(string by) => ArgumentException.ThrowIfNullOrWhiteSpace(by);

    private long NowMs() => _time.GetUtcNow().ToUnixTimeMilliseconds();

    private sealed class Entry(AlarmDefinition definition)
    {
        public AlarmDefinition Definition { get; } = definition;

        public AlarmStateName State = AlarmStateName.Normal;
        public bool InAlarm;
        public bool Acknowledged = true;
        public double Value = double.NaN;
        public string Detail = "";
        public long SinceMs;
        public long? ActivatedMs;
        public long OnSinceMs = long.MinValue;
        public long OffSinceMs = long.MinValue;
        public long? ShelvedUntilMs;
        public string ShelvedBy = "";
        public string ShelveReason = "";

        public void ResetTimers() => (OnSinceMs, OffSinceMs) = (long.MinValue, long.MinValue);
    }
}
