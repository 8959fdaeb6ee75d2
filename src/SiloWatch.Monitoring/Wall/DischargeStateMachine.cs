namespace SiloWatch.Monitoring.Wall;

/// <summary>What the contents of a silo are doing, as the wall watch and the alarms see it.</summary>
public enum DischargeState
{
    /// <summary>Contents at rest.</summary>
    Idle,

    Filling,

    Discharging,

    /// <summary>A fill or discharge has just stopped: loads are settling; a discharge may resume with its baseline kept.</summary>
    Settling,
}

/// <summary>A change of the discharge state, for the journal and the event record.</summary>
/// <param name="OnsetMs">When the evidence for the new state began (before the confirmation delay).</param>
public sealed record DischargeStateChange(long TimestampMs, DischargeState From, DischargeState To, long OnsetMs, string Reason);

/// <summary>
/// Idle / filling / discharging / settling from the inventory's rate estimate and its 95 % interval,
/// with hysteresis (enter and exit thresholds) and minimum durations; or from an outlet signal when
/// the plant sends one (see <see cref="OnOutlet"/>). One instance per silo, one thread.
/// <para>
/// Rules: discharge evidence is a rate below −EnterRate with the upper 95 % bound below −ExitRate;
/// fill evidence the mirror; quiet is |rate| below ExitRate. A state is entered when its evidence has
/// held for the onset delay; discharging and filling end into settling after quiet held for the end
/// delay; settling becomes idle after the settling time. No state is left before its minimum duration.
/// A bad or missing estimate is no evidence: the state holds.
/// </para>
/// </summary>
public sealed class DischargeStateMachine(WallWatchOptions options)
{
    private readonly long _onsetDelayMs = (long)options.StateOnsetDelay.TotalMilliseconds;
    private readonly long _endDelayMs = (long)options.StateEndDelay.TotalMilliseconds;
    private readonly long _settlingMs = (long)options.SettlingTime.TotalMilliseconds;
    private readonly long _minDurationMs = (long)options.MinStateDuration.TotalMilliseconds;
    private readonly long _outletFreshMs = (long)options.OutletSignalTimeout.TotalMilliseconds;

    private Evidence _evidence = Evidence.None;
    private long _evidenceSinceMs = long.MinValue;
    private long _outletMs = long.MinValue;
    private bool _outletOpen;
    private long _outletChangedMs = long.MinValue;
    private DischargeState _beforeSettling = DischargeState.Idle;

    public DischargeState State { get; private set; } = DischargeState.Idle;

    /// <summary>When the present state was entered (confirmation time).</summary>
    public long SinceMs { get; private set; } = long.MinValue;

    /// <summary>When the evidence of the present fill or discharge began (kept through settling); for a discharge, the onset the baseline is taken before.</summary>
    public long OnsetMs { get; private set; } = long.MinValue;

    /// <summary>True while a recent outlet signal decides discharging instead of the rate.</summary>
    public bool UsesOutletSignal(long nowMs) => _outletMs != long.MinValue && nowMs - _outletMs <= _outletFreshMs;

    /// <summary>
    /// An outlet signal (gate or feeder running, from a PLC): open means the silo is discharging. Fed by the wall watch
    /// from the silo's <see cref="Plant.SensorKind.Outlet"/> sensors.
    /// </summary>
    public void OnOutlet(long tsMs, bool open)
    {
        if (open != _outletOpen || _outletChangedMs == long.MinValue)
        {
            _outletChangedMs = tsMs;
        }

        _outletOpen = open;
        _outletMs = tsMs;
    }

    /// <summary>Advances the state with the inventory at <paramref name="nowMs"/>; returns the change, or null.</summary>
    public DischargeStateChange? Update(long nowMs, InventoryEstimate? inventory) => Update(nowMs, inventory, nowMs);

    /// <summary>
    /// Advances the state with the inventory at <paramref name="nowMs"/>, judging whether the outlet signal is
    /// recent at <paramref name="seenUntilMs"/> (the time up to which the silo's arrivals have been seen); returns the change, or null.
    /// </summary>
    public DischargeStateChange? Update(long nowMs, InventoryEstimate? inventory, long seenUntilMs)
    {
        if (SinceMs == long.MinValue)
        {
            SinceMs = nowMs;
        }

        var outlet = UsesOutletSignal(Math.Min(nowMs, seenUntilMs));
        var evidence = outlet ? OutletEvidence(inventory) : RateEvidence(inventory);
        if (evidence != _evidence)
        {
            _evidence = evidence;
            _evidenceSinceMs = outlet && _outletChangedMs != long.MinValue ? _outletChangedMs : nowMs;
        }

        if (evidence == Evidence.Unknown)
        {
            return null;
        }

        var held = nowMs - _evidenceSinceMs;
        var inStateMs = nowMs - SinceMs;
        if (inStateMs < _minDurationMs)
        {
            return null;
        }

        var onsetDelay = outlet ? 0 : _onsetDelayMs;
        switch (State)
        {
            case DischargeState.Idle:
                if (evidence == Evidence.Discharging && held >= onsetDelay)
                {
                    return Enter(DischargeState.Discharging, nowMs, _evidenceSinceMs, outlet ? "outlet open" : "mass falling beyond the rate threshold");
                }

                if (evidence == Evidence.Filling && held >= _onsetDelayMs)
                {
                    return Enter(DischargeState.Filling, nowMs, _evidenceSinceMs, "mass rising beyond the rate threshold");
                }

                break;
            case DischargeState.Discharging:
                if (evidence != Evidence.Discharging && evidence != Evidence.Between && held >= (outlet ? 0 : _endDelayMs))
                {
                    return Enter(DischargeState.Settling, nowMs, _evidenceSinceMs, outlet ? "outlet closed" : "mass steady again");
                }

                break;
            case DischargeState.Filling:
                if (evidence != Evidence.Filling && evidence != Evidence.Between && held >= _endDelayMs)
                {
                    return Enter(DischargeState.Settling, nowMs, _evidenceSinceMs, "mass steady again");
                }

                break;
            case DischargeState.Settling:
                if (evidence == Evidence.Discharging && held >= onsetDelay)
                {
                    // Resumed after a short stop: the onset stays the original one so the baseline is kept.
                    return _beforeSettling == DischargeState.Discharging
                        ? Enter(DischargeState.Discharging, nowMs, OnsetMs, "discharge resumed")
                        : Enter(DischargeState.Discharging, nowMs, _evidenceSinceMs, outlet ? "outlet open" : "mass falling beyond the rate threshold");
                }

                if (evidence == Evidence.Filling && held >= _onsetDelayMs)
                {
                    return Enter(DischargeState.Filling, nowMs, _evidenceSinceMs, "filling started");
                }

                if (evidence is Evidence.Quiet or Evidence.Between && inStateMs >= _settlingMs)
                {
                    return Enter(DischargeState.Idle, nowMs, nowMs, "settled");
                }

                break;
        }

        return null;
    }

    /// <summary>Restores the state after a restart (from the wall snapshot).</summary>
    public void Restore(DischargeState state, long sinceMs, long onsetMs)
    {
        _beforeSettling = state == DischargeState.Settling ? DischargeState.Discharging : DischargeState.Idle;
        State = state;
        SinceMs = sinceMs;
        OnsetMs = onsetMs;
        _evidence = Evidence.None;
    }

    private DischargeStateChange Enter(DischargeState to, long nowMs, long onsetMs, string reason)
    {
        if (to == DischargeState.Settling)
        {
            // Settling keeps the onset of the fill or discharge it follows.
            _beforeSettling = State;
            onsetMs = OnsetMs;
        }

        var change = new DischargeStateChange(nowMs, State, to, onsetMs, reason);
        State = to;
        SinceMs = nowMs;
        OnsetMs = onsetMs;
        return change;
    }

    private Evidence RateEvidence(InventoryEstimate? inventory)
    {
        if (inventory is null || inventory.Quality == Quality.Bad || !double.IsFinite(inventory.RateKgPerS))
        {
            return Evidence.Unknown;
        }

        var rate = inventory.RateKgPerS;
        var high = double.IsFinite(inventory.RateHigh95KgPerS) ? inventory.RateHigh95KgPerS : rate;
        var low = double.IsFinite(inventory.RateLow95KgPerS) ? inventory.RateLow95KgPerS : rate;
        if (rate < -options.EnterRateKgPerS && high < -options.ExitRateKgPerS)
        {
            return Evidence.Discharging;
        }

        if (rate > options.EnterRateKgPerS && low > options.ExitRateKgPerS)
        {
            return Evidence.Filling;
        }

        // Hysteresis band: neither confirms nor ends a state.
        return Math.Abs(rate) < options.ExitRateKgPerS ? Evidence.Quiet : Evidence.Between;
    }

    private Evidence OutletEvidence(InventoryEstimate? inventory)
    {
        if (_outletOpen)
        {
            return Evidence.Discharging;
        }

        // Outlet closed: filling still comes from the rate.
        var rate = RateEvidence(inventory);
        return rate == Evidence.Discharging ? Evidence.Between : rate;
    }

    private enum Evidence
    {
        None,
        Unknown,
        Quiet,
        Between,
        Discharging,
        Filling,
    }
}
