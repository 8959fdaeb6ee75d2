using SiloWatch.Mechanics;
using SiloWatch.Monitoring.Alarms;
using SiloWatch.Plant;

namespace SiloWatch.Monitoring.Wall;

/// <summary>
/// Wall-load watch of one silo: harmonic analysis of every gauge ring, the discharge state, the
/// asymmetry and excess indices of a discharge against its baseline and against the expected loads,
/// and the values of every alarm condition of the silo. One instance per silo, one thread, no locks.
/// <para>
/// Feed it the compensated gauge strains, temperatures, load-cell forces and qualities (<see cref="Update"/>
/// with <see cref="SiloMonitor.Readings"/>, or the single-value methods), then call <see cref="Evaluate"/>
/// once a second with the inventory estimate.
/// </para>
/// <para>
/// Indices of a discharge (DOMAIN.md §4): the change since the baseline (averaged over a window just
/// before the onset) of every good gauge, less its residual thermal strain k·ΔT (k learned while idle),
/// in the load sense, is fitted by harmonics. A1/A0 and A2/A0 divide the change's A1 and A2 by the mean
/// load at the ring: the expected discharge mean from Mechanics (floored at a fraction of its value at
/// the baseline and at an absolute floor). The mean change itself is reported but not used as the
/// divisor: it rises by the discharge factor at the start and then falls through zero as the level
/// drops, which would make the ratio meaningless; the setpoint compares with design patch assumptions,
/// which are relative to the mean load. Gauge loads are the expected filling load at the baseline plus the
/// measured change (or the tared gauge value when the gauges have been tared): peak over mean and measured
/// over expected come from them.
/// </para>
/// </summary>
public sealed class WallWatch
{
    private readonly SiloRef _silo;
    private readonly WallWatchOptions _options;
    private readonly DischargeStateMachine _state;
    private readonly Ring[] _rings;
    private readonly SensorSlot[] _slots;
    private readonly double[] _expectedFilling;
    private readonly double[] _expectedDischarge;
    private readonly double[] _coefficients;
    private readonly double[] _scratch;
    private readonly double[] _scratch2;
    private readonly HistoryEntry[] _history;
    private readonly Queue<(long Ms, double MassKg)> _massHistory = new();
    private long _firstMassMs = long.MinValue;
    private readonly int[] _gaugeSensors;
    private readonly int[] _outletSensors;
    private readonly long _outletFreshMs;
    private readonly double _youngsGPa;
    private readonly double _poisson;
    private readonly double _thicknessM;
    private readonly int[] _supportOfCell;
    private readonly double _supportCapacityKn;
    private readonly string _overfillKey;
    private readonly string _supportKey;
    private readonly string _idleKey;

    private SiloModel _model;
    private int _historyCount;
    private int _historyNext;
    private long _lastHistoryMs = long.MinValue;
    private bool _baselineValid;
    private double _baselineMassKg = double.NaN;
    private long _dischargeOnsetMs;
    private long _dischargeEndMs = long.MinValue;
    private double _dischargeEndMassKg = double.NaN;

    public WallWatch(SiloRef silo, SiloModel model, WallWatchOptions options)
    {
        ArgumentNullException.ThrowIfNull(silo);
        ArgumentNullException.ThrowIfNull(model);
        ArgumentNullException.ThrowIfNull(options);
        _silo = silo;
        _model = model;
        _options = options;
        _state = new DischargeStateMachine(options);
        var g = silo.Options.Geometry;
        _youngsGPa = g.WallYoungsModulusGPa;
        _poisson = g.WallPoissonRatio;
        _thicknessM = g.WallThicknessM;
        _supportCapacityKn = silo.Options.Weighing.SupportCapacityKn;
        _overfillKey = ConditionKeys.Overfill(silo.SiloId);
        _supportKey = ConditionKeys.SupportOverload(silo.SiloId);
        _idleKey = ConditionKeys.IdleMassChange(silo.SiloId);

        var sensors = silo.Options.Sensors;
        _slots = new SensorSlot[sensors.Count];
        for (var i = 0; i < sensors.Count; i++)
        {
            _slots[i] = new SensorSlot(sensors[i]) { BadKey = ConditionKeys.SensorBad(silo.SiloId, sensors[i].Id) };
        }

        for (var i = 0; i < sensors.Count; i++)
        {
            var pair = sensors[i].TemperatureSensor;
            if (!string.IsNullOrEmpty(pair) && silo.TryGetSensor(pair, out var t) && t.Options.Kind == SensorKind.Temperature)
            {
                _slots[i].TemperatureSensor = t.Index;
            }
        }

        _supportOfCell = [.. sensors.Select(s => s.Kind == SensorKind.LoadCell ? s.Support : 0)];
        _outletSensors = [.. sensors.Select((s, i) => (s, i)).Where(x => x.s.Kind == SensorKind.Outlet).Select(x => x.i)];
        _outletFreshMs = (long)options.OutletSignalTimeout.TotalMilliseconds;

        // Rings: gauges grouped by ring id, in the model's gauge order.
        var tau = options.ThermalLearningTime.TotalSeconds;
        var rings = new List<Ring>();
        foreach (var group in model.Gauges.Where(x => !string.IsNullOrEmpty(x.Ring)).GroupBy(x => x.Ring, StringComparer.Ordinal))
        {
            var gauges = group.ToArray();
            if (gauges.Length > 64)
            {
                throw new NotSupportedException($"silo {silo.Key}: ring {group.Key} has more than 64 gauges");
            }

            var kind = gauges[0].Kind;
            var mixed = gauges.Any(x => x.Kind != kind);
            var ring = new Ring(
                group.Key,
                kind,
                gauges.Average(x => x.HeightAboveTransitionM),
                [.. gauges.Select(x => x.SensorIndex)],
                [.. gauges.Select(x => x.Index)],
                new RingHarmonicFit([.. gauges.Select(x => x.AngleDeg)], options.MaxHarmonic, options.MaxConditionNumber),
                [.. gauges.Select(_ => new ThermalSensitivity(options.ThermalResidualPriorMicroPerK, options.ThermalPriorWeightK2, tau, options.ThermalMaxResidualMicroPerK))],
                kind == SensorKind.AxialStrain ? -1.0 : 1.0,
                mixed ? "ring mixes axial and hoop gauges: analysed as " + kind : "")
            {
                A1Key = ConditionKeys.AsymmetryA1(silo.SiloId, group.Key),
                A2Key = ConditionKeys.AsymmetryA2(silo.SiloId, group.Key),
                ExcessKey = ConditionKeys.Excess(silo.SiloId, group.Key),
            };
            rings.Add(ring);
        }

        _rings = [.. rings];
        _gaugeSensors = [.. _rings.SelectMany(r => r.Sensors)];
        var maxGauges = _rings.Length == 0 ? 1 : _rings.Max(r => r.Sensors.Length);
        _expectedFilling = new double[Math.Max(1, model.Gauges.Count)];
        _expectedDischarge = new double[_expectedFilling.Length];
        _coefficients = new double[(2 * options.MaxHarmonic) + 1];
        _scratch = new double[maxGauges];
        _scratch2 = new double[maxGauges];
        var historyLength = (int)Math.Ceiling((options.BaselineLead + options.BaselineWindow).TotalSeconds) + 8;
        _history = new HistoryEntry[historyLength];
        for (var i = 0; i < historyLength; i++)
        {
            _history[i] = new HistoryEntry(sensors.Count);
        }
    }

    public string SiteId => _silo.SiteId;

    public string SiloId => _silo.SiloId;

    public DischargeState State => _state.State;

    /// <summary>Ring ids in the order of <see cref="WallAssessment.Rings"/>.</summary>
    public IReadOnlyList<string> Rings => [.. _rings.Select(r => r.Id)];

    /// <summary>Replaces the model after a confirmed calibration (expected loads follow it).</summary>
    public void SetModel(SiloModel model) => _model = model ?? throw new ArgumentNullException(nameof(model));

    /// <summary>One compensated gauge strain (microstrain, tension positive) with the temperature beside it and its quality.</summary>
    public void OnGauge(int sensorIndex, long tsMs, double strainMicro, double temperatureC, Quality quality)
    {
        if ((uint)sensorIndex >= (uint)_slots.Length)
        {
            return;
        }

        var s = _slots[sensorIndex];
        s.Value = strainMicro;
        s.TemperatureC = temperatureC;
        s.Quality = quality;
        s.LastMs = tsMs;
    }

    /// <summary>One load-cell force (kN, gross: structure included) and its quality, for the support-overload condition.</summary>
    public void OnLoadCell(int sensorIndex, long tsMs, double forceKn, Quality quality) => OnValue(sensorIndex, tsMs, forceKn, quality);

    /// <summary>Any sensor's engineering value and quality (temperatures in degC).</summary>
    public void OnValue(int sensorIndex, long tsMs, double value, Quality quality)
    {
        if ((uint)sensorIndex >= (uint)_slots.Length)
        {
            return;
        }

        var s = _slots[sensorIndex];
        s.Value = value;
        s.Quality = quality;
        s.LastMs = tsMs;
    }

    /// <summary>
    /// One sample of an outlet signal (<see cref="SensorKind.Outlet"/>: 1 open or running, 0 closed or stopped) and its
    /// quality. While a good one is fresh it decides discharging (<see cref="DischargeStateMachine.OnOutlet"/>); several
    /// outlets of a silo count as open when any fresh one is open.
    /// </summary>
    public void OnOutlet(int sensorIndex, long tsMs, double value, Quality quality)
    {
        OnValue(sensorIndex, tsMs, value, quality);
        ForwardOutlets();
    }

    private void ForwardOutlets()
    {
        var latest = long.MinValue;
        foreach (var i in _outletSensors)
        {
            var s = _slots[i];
            if (s.Quality is not (null or Quality.Bad) && double.IsFinite(s.Value))
            {
                latest = Math.Max(latest, s.LastMs);
            }
        }

        if (latest == long.MinValue)
        {
            return; // no usable outlet signal: the state machine falls back to the rate once the last one is stale
        }

        var open = false;
        foreach (var i in _outletSensors)
        {
            var s = _slots[i];
            open |= s.Quality is not (null or Quality.Bad) && s.Value >= 0.5 && latest - s.LastMs <= _outletFreshMs;
        }

        _state.OnOutlet(latest, open);
    }

    /// <summary>
    /// Takes every sensor's value and quality from the inventory side's readings (index = sensor index of
    /// the silo, as <see cref="SiloMonitor.Readings"/> lists them); a gauge's temperature is its paired sensor's.
    /// </summary>
    public void Update(IReadOnlyList<SensorReading> readings)
    {
        ArgumentNullException.ThrowIfNull(readings);
        var n = Math.Min(readings.Count, _slots.Length);
        for (var i = 0; i < n; i++)
        {
            var r = readings[i];
            var s = _slots[i];
            s.Value = r.Value;
            s.Quality = r.Quality;
            s.LastMs = r.TimestampMs;
            s.Reason = r.QualityReason;
        }

        for (var i = 0; i < n; i++)
        {
            var s = _slots[i];
            if (s.TemperatureSensor >= 0)
            {
                var t = _slots[s.TemperatureSensor];
                s.TemperatureC = t.Quality == Quality.Bad ? double.NaN : t.Value;
            }
        }

        if (_outletSensors.Length > 0)
        {
            ForwardOutlets();
        }
    }

    /// <summary>Gauge zeros from a commanded tare (silo empty): gauge loads then come from the gauges directly.</summary>
    public void ApplyTare(TareRecord tare)
    {
        ArgumentNullException.ThrowIfNull(tare);
        foreach (var v in tare.Values)
        {
            if (_silo.TryGetSensor(v.SensorId, out var s) && v.Unit == "microstrain")
            {
                _slots[s.Index].ZeroMicro = v.Value;
            }
        }
    }

    /// <summary>Evaluates the silo at <paramref name="nowMs"/> with the inventory estimate of the same moment; values older than their limit at that moment are not used.</summary>
    public WallAssessment Evaluate(long nowMs, InventoryEstimate? inventory) => Evaluate(nowMs, inventory, nowMs);

    /// <summary>
    /// Evaluates the silo at <paramref name="nowMs"/> with the inventory estimate of the same moment, judging
    /// how old a value is at <paramref name="seenUntilMs"/>, the time up to which the silo's arrivals have been
    /// seen (<see cref="SiloMonitor.ArrivalsSeenUntil"/>): a backlog of its messages does not make its gauges,
    /// cells and outlet signal too old to use.
    /// </summary>
    public WallAssessment Evaluate(long nowMs, InventoryEstimate? inventory, long seenUntilMs)
    {
        var seenMs = Math.Min(nowMs, seenUntilMs);
        var before = _state.State;
        var change = _state.Update(nowMs, inventory, seenMs);
        var massKg = inventory is { Quality: not Quality.Bad } && double.IsFinite(inventory.MassKg) ? inventory.MassKg : double.NaN;
        DischargeSummary? finished = null;

        if (change is not null)
        {
            if (change.To == DischargeState.Discharging && before != DischargeState.Settling)
            {
                CaptureBaseline(change.OnsetMs, massKg);
            }
            else if (change.To == DischargeState.Discharging && !_baselineValid)
            {
                CaptureBaseline(change.OnsetMs, massKg);
            }

            if (before == DischargeState.Idle)
            {
                foreach (var ring in _rings)
                {
                    foreach (var t in ring.Thermal)
                    {
                        t.Break();
                    }
                }
            }

            if (change.From == DischargeState.Discharging && change.To == DischargeState.Settling)
            {
                _dischargeEndMs = nowMs;
                _dischargeEndMassKg = massKg;
            }

            if (change.From == DischargeState.Settling && change.To != DischargeState.Discharging && _baselineValid)
            {
                finished = FinishDischarge(nowMs, massKg);
            }
        }

        RecordHistory(nowMs, seenMs, massKg);
        if (_state.State == DischargeState.Idle)
        {
            LearnThermal(nowMs, seenMs);
        }

        var state = _state.State;
        var discharging = state == DischargeState.Discharging && _baselineValid;
        var fill = double.IsFinite(massKg) ? _model.StateAtMass(massKg, FlowMode.Filling) : default;
        var disch = double.IsFinite(massKg) ? _model.StateAtMass(massKg, FlowMode.Discharging) : default;
        if (double.IsFinite(massKg))
        {
            _model.ExpectedStrains(disch, _expectedDischarge);
        }
        else
        {
            Array.Fill(_expectedDischarge, double.NaN);
        }

        var rings = new RingAssessment[_rings.Length];
        var conditions = new List<ConditionValue>((_rings.Length * 3) + 4 + _slots.Length);
        for (var r = 0; r < _rings.Length; r++)
        {
            var ring = _rings[r];
            rings[r] = AssessRing(ring, seenMs, discharging, double.IsFinite(massKg) ? fill : null, double.IsFinite(massKg) ? disch : null);
            var detail = double.IsFinite(rings[r].AsymmetryDirectionDeg) ? $"ring {ring.Id}, highest load rise toward {rings[r].AsymmetryDirectionDeg:0}°" : ring.Detail;
            conditions.Add(new ConditionValue(ring.A1Key, rings[r].A1Ratio, state, detail));
            conditions.Add(new ConditionValue(ring.A2Key, rings[r].A2Ratio, state, ring.Detail));
            conditions.Add(new ConditionValue(ring.ExcessKey, rings[r].MeasuredOverExpected, state, ring.Detail));
            if (discharging)
            {
                ring.TrackPeak(rings[r]);
            }
        }

        conditions.Add(new ConditionValue(_overfillKey, inventory is { Quality: not Quality.Bad } ? inventory.PercentFull : double.NaN, state));
        conditions.Add(new ConditionValue(_supportKey, SupportLoadPercent(seenMs, massKg), state));
        conditions.Add(new ConditionValue(_idleKey, IdleMassChangeKgPerMin(nowMs, massKg), state));
        for (var i = 0; i < _slots.Length; i++)
        {
            var s = _slots[i];
            var value = s.Quality is null ? double.NaN : s.Quality == Quality.Bad ? 1.0 : 0.0;
            conditions.Add(new ConditionValue(s.BadKey, value, state, s.Reason));
        }

        return new WallAssessment(
            SiteId,
            SiloId,
            nowMs,
            state,
            state is DischargeState.Discharging or DischargeState.Settling && _baselineValid ? _dischargeOnsetMs : null,
            change,
            finished,
            massKg,
            _rings.Length > 0 && _rings.All(x => x.Thermal.All(t => t.VarianceK2 >= _options.ThermalMinVarianceK2)),
            rings,
            conditions);
    }

    /// <summary>Discharge state, baseline, learned thermal sensitivities and gauge zeros, for a restart.</summary>
    public WallSnapshot Snapshot(long nowMs)
    {
        var gauges = new List<GaugeSnapshot>();
        foreach (var ring in _rings)
        {
            for (var k = 0; k < ring.Sensors.Length; k++)
            {
                var slot = _slots[ring.Sensors[k]];
                gauges.Add(new GaugeSnapshot(slot.Options.Id, _baselineValid ? Finite(ring.BaselineStrain[k]) : null, Finite(ring.BaselineTemperature[k]),
                    ring.Thermal[k].MicroPerK, Math.Max(ring.Thermal[k].VarianceK2, 0), Finite(slot.ZeroMicro)));
            }
        }

        return new WallSnapshot(WallSnapshot.CurrentVersion, SiteId, SiloId, nowMs, _state.State, _state.SinceMs, _state.OnsetMs,
            _baselineValid ? Finite(_baselineMassKg) : null, gauges);
    }

    private static double? Finite(double x) => double.IsFinite(x) ? x : null;

    /// <summary>Restores a snapshot; returns what could not be restored (empty when all was).</summary>
    public IReadOnlyList<string> Restore(WallSnapshot snapshot)
    {
        ArgumentNullException.ThrowIfNull(snapshot);
        var problems = new List<string>();
        if (snapshot.SiteId != SiteId || snapshot.SiloId != SiloId)
        {
            throw new ArgumentException($"snapshot is for {snapshot.SiteId}/{snapshot.SiloId}, not {_silo.Key}", nameof(snapshot));
        }

        if (snapshot.Version != WallSnapshot.CurrentVersion)
        {
            problems.Add($"wall snapshot version {snapshot.Version} is not {WallSnapshot.CurrentVersion}: nothing restored");
            return problems;
        }

        _state.Restore(snapshot.State, snapshot.SinceMs, snapshot.OnsetMs);
        var byId = snapshot.Gauges.ToDictionary(x => x.SensorId, StringComparer.Ordinal);
        var anyBaseline = false;
        foreach (var ring in _rings)
        {
            for (var k = 0; k < ring.Sensors.Length; k++)
            {
                var slot = _slots[ring.Sensors[k]];
                if (!byId.TryGetValue(slot.Options.Id, out var g))
                {
                    problems.Add($"gauge {slot.Options.Id} has no saved state");
                    ring.BaselineStrain[k] = double.NaN;
                    continue;
                }

                ring.BaselineStrain[k] = g.BaselineStrainMicro ?? double.NaN;
                ring.BaselineTemperature[k] = g.BaselineTemperatureC ?? double.NaN;
                ring.Thermal[k].Restore(g.ThermalResidualMicroPerK, g.ThermalVarianceK2);
                slot.ZeroMicro = g.ZeroMicro ?? double.NaN;
                anyBaseline |= g.BaselineStrainMicro is not null;
            }
        }

        _baselineValid = anyBaseline && snapshot.State is DischargeState.Discharging or DischargeState.Settling;
        _baselineMassKg = snapshot.BaselineMassKg ?? double.NaN;
        _dischargeOnsetMs = snapshot.OnsetMs;
        SetBaselineExpectations();

        return problems;
    }

    private RingAssessment AssessRing(Ring ring, long seenMs, bool discharging, FillState? fill, FillState? disch)
    {
        var n = ring.Sensors.Length;
        var present = _scratch.AsSpan(0, n);
        ulong good = 0;
        var tared = true;
        for (var k = 0; k < n; k++)
        {
            var slot = _slots[ring.Sensors[k]];
            var usable = Usable(slot, seenMs);
            tared &= double.IsFinite(slot.ZeroMicro);
            present[k] = usable ? slot.Value - (double.IsFinite(slot.ZeroMicro) ? slot.ZeroMicro : 0) : double.NaN;
            if (usable)
            {
                good |= 1UL << k;
            }
        }

        var goodCount = System.Numerics.BitOperations.PopCount(good);
        var order = ring.Fit.Fit(present, good, _coefficients);
        var strain = RingHarmonicFit.Harmonics(_coefficients, order);
        var condition = ring.Fit.ConditionNumber(good);

        // Membrane forces per gauge, load sense: the other stress component from the model.
        var wall = disch is { } d ? _model.WallAt(State == DischargeState.Discharging ? d : fill!.Value, ring.HeightM) : default;
        var forces = _scratch2.AsSpan(0, n);
        for (var k = 0; k < n; k++)
        {
            forces[k] = double.IsFinite(present[k]) ? ForceLoadSense(ring, present[k], wall) : double.NaN;
        }

        var forceOrder = ring.Fit.Fit(forces, good, _coefficients);
        var force = RingHarmonicFit.Harmonics(_coefficients, forceOrder);

        var notes = new List<string>();
        if (ring.Note.Length > 0)
        {
            notes.Add(ring.Note);
        }

        if (goodCount < n)
        {
            notes.Add($"{n - goodCount} of {n} gauges not usable");
        }

        if (order < _options.MaxHarmonic)
        {
            notes.Add(order < 0 ? "no good gauge" : $"harmonics above n = {order} not resolved by the good gauges");
        }

        if (!tared)
        {
            notes.Add("gauges not tared: present strain includes the gauge zero offsets");
        }

        double expectedMean = double.NaN;
        if (disch is not null)
        {
            var sum = 0.0;
            for (var k = 0; k < n; k++)
            {
                sum += ring.Sign * _expectedDischarge[ring.ModelGauges[k]];
            }

            expectedMean = sum / n;
        }

        Harmonic[] changeH = [];
        Harmonic[] changeF = [];
        Harmonic[] tempH = [];
        double a1 = double.NaN, a2 = double.NaN, direction = double.NaN, peakOverMean = double.NaN, overExpected = double.NaN;
        var covered = disch is { } ds && ds.ContactAboveTransitionM - ring.HeightM >= _options.MinCoverDepthM;
        if (discharging && disch is not null && !covered)
        {
            notes.Add("ring not covered by the contents: not assessed");
        }

        if (discharging && covered)
        {
            var delta = _scratch2.AsSpan(0, n);
            var dTemp = new double[n];
            ulong both = 0;
            for (var k = 0; k < n; k++)
            {
                var slot = _slots[ring.Sensors[k]];
                var baseline = ring.BaselineStrain[k];
                if ((good & (1UL << k)) == 0 || !double.IsFinite(baseline))
                {
                    delta[k] = double.NaN;
                    dTemp[k] = double.NaN;
                    continue;
                }

                var dT = double.IsFinite(slot.TemperatureC) && double.IsFinite(ring.BaselineTemperature[k]) ? slot.TemperatureC - ring.BaselineTemperature[k] : 0;
                dTemp[k] = dT;
                delta[k] = ring.Sign * (slot.Value - baseline - (ring.Thermal[k].MicroPerK * dT));
                both |= 1UL << k;
            }

            var changeOrder = ring.Fit.Fit(delta, both, _coefficients);
            changeH = RingHarmonicFit.Harmonics(_coefficients, changeOrder);
            changeF = [.. changeH.Select(h => ScaleHarmonic(h, _youngsGPa * _thicknessM))];
            var tempOrder = ring.Fit.Fit(dTemp, both, _coefficients);
            tempH = RingHarmonicFit.Harmonics(_coefficients, tempOrder);

            var floor = double.IsFinite(ring.ExpectedMeanAtBaseline)
                ? Math.Max(_options.MinMeanMicro, _options.MinMeanFraction * Math.Abs(ring.ExpectedMeanAtBaseline))
                : _options.MinMeanMicro;
            var divisor = double.IsFinite(expectedMean) ? Math.Max(Math.Abs(expectedMean), floor) : double.NaN;
            if (changeOrder >= 1)
            {
                a1 = changeH[1].Amplitude / divisor;
                direction = changeH[1].DirectionDeg;
            }

            if (changeOrder >= 2)
            {
                a2 = changeH[2].Amplitude / divisor;
            }

            // Gauge loads: tared value, or the expected filling load at the baseline plus the measured change.
            double max = double.NegativeInfinity, sum = 0;
            var count = 0;
            for (var k = 0; k < n; k++)
            {
                if ((both & (1UL << k)) == 0)
                {
                    continue;
                }

                var load = tared
                    ? ring.Sign * (present[k] - (ring.Thermal[k].MicroPerK * dTemp[k]))
                    : (ring.Sign * _expectedFilling[ring.ModelGauges[k]]) + delta[k];
                max = Math.Max(max, load);
                sum += load;
                count++;
            }

            if (count > 0 && double.IsFinite(max))
            {
                var mean = sum / count;
                peakOverMean = Math.Abs(mean) > floor ? max / mean : double.NaN;
                overExpected = max / divisor;
            }

            if (changeOrder < 1)
            {
                notes.Add("too few gauges with a baseline for the asymmetry");
            }
        }

        return new RingAssessment(ring.Id, ring.Kind, ring.HeightM, goodCount, n, order, condition, strain, force, changeH, changeF, tempH,
            expectedMean, a1, a2, direction, peakOverMean, overExpected, string.Join("; ", notes));
    }

    private double ForceLoadSense(Ring ring, double strainMicro, WallPoint wall)
    {
        // Plane stress with the other component from the model [D, DOMAIN.md §3]:
        // axial gauge σ_z = E·ε_z + ν·σ_θ (σ_θ = n_θ/t); hoop gauge σ_θ = E·ε_θ + ν·σ_z (σ_z = −n_z/t). Same form, roles swapped.
        if (!(_thicknessM > 0))
        {
            return double.NaN;
        }

        if (ring.Kind == SensorKind.AxialStrain)
        {
            var hoopKPa = double.IsFinite(wall.HoopForceKnPerM) ? wall.HoopForceKnPerM / _thicknessM : 0;
            var axialKPa = MembraneForces.AxialStressFromAxialStrainKPa(strainMicro, hoopKPa, _youngsGPa, _poisson);
            return -MembraneForces.ForcePerMetreKnPerM(axialKPa, _thicknessM);
        }

        var axialStressKPa = -wall.AxialForceKnPerM / _thicknessM;
        var hoopStressKPa = MembraneForces.AxialStressFromAxialStrainKPa(strainMicro, axialStressKPa, _youngsGPa, _poisson);
        return MembraneForces.ForcePerMetreKnPerM(hoopStressKPa, _thicknessM);
    }

    private static Harmonic ScaleHarmonic(Harmonic h, double factor) =>
        new(h.Order, h.Cos * factor, h.Sin * factor, h.Amplitude * factor, h.DirectionDeg);

    // How old a value is, is judged at seenMs: the time up to which the silo's arrivals have been seen.
    private bool Usable(SensorSlot slot, long seenMs) =>
        slot.Quality is { } q
        && (q == Quality.Good || (q == Quality.Uncertain && _options.UseUncertainGauges))
        && double.IsFinite(slot.Value)
        && seenMs - slot.LastMs <= (long)_options.GaugeStaleAfter.TotalMilliseconds;

    private void RecordHistory(long nowMs, long seenMs, double massKg)
    {
        if (_lastHistoryMs != long.MinValue && nowMs - _lastHistoryMs < 900)
        {
            return;
        }

        _lastHistoryMs = nowMs;
        var snap = _history[_historyNext];
        snap.Ms = nowMs;
        snap.MassKg = massKg;
        foreach (var i in _gaugeSensors)
        {
            // A gauge briefly not good (a held spike at the step a discharge starts with) keeps its last good value
            // for the baseline, for up to the baseline lead.
            var slot = _slots[i];
            if (Usable(slot, seenMs))
            {
                slot.LastGoodValue = slot.Value;
                slot.LastGoodMs = nowMs;
            }

            snap.Strain[i] = nowMs - slot.LastGoodMs <= (long)_options.BaselineLead.TotalMilliseconds ? slot.LastGoodValue : double.NaN;
            snap.Temperature[i] = slot.TemperatureC;
        }

        _historyNext = (_historyNext + 1) % _history.Length;
        _historyCount = Math.Min(_historyCount + 1, _history.Length);
    }

    private void CaptureBaseline(long onsetMs, double massKg)
    {
        // Average over [onset − lead − window, onset − lead]; if the history is too short, the oldest seconds available.
        var end = onsetMs - (long)_options.BaselineLead.TotalMilliseconds;
        var start = end - (long)_options.BaselineWindow.TotalMilliseconds;
        var picked = new List<HistoryEntry>();
        for (var j = 0; j < _historyCount; j++)
        {
            var s = _history[j];
            if (s.Ms >= start && s.Ms <= end)
            {
                picked.Add(s);
            }
        }

        if (picked.Count == 0 && _historyCount > 0)
        {
            var oldest = _history.Take(_historyCount).Where(s => s.Ms <= onsetMs).OrderBy(s => s.Ms).Take(3).ToList();
            picked.AddRange(oldest.Count > 0 ? oldest : _history.Take(_historyCount).OrderBy(s => s.Ms).Take(1));
        }

        var any = false;
        foreach (var ring in _rings)
        {
            for (var k = 0; k < ring.Sensors.Length; k++)
            {
                var i = ring.Sensors[k];
                var values = picked.Select(p => p.Strain[i]).Where(double.IsFinite).ToArray();
                var temps = picked.Select(p => p.Temperature[i]).Where(double.IsFinite).ToArray();
                ring.BaselineStrain[k] = values.Length > 0 ? values.Average() : double.NaN;
                ring.BaselineTemperature[k] = temps.Length > 0 ? temps.Average() : double.NaN;
                any |= values.Length > 0;
            }

            ring.ResetPeak();
        }

        var masses = picked.Select(p => p.MassKg).Where(double.IsFinite).ToArray();
        _baselineMassKg = masses.Length > 0 ? masses.Average() : massKg;
        _baselineValid = any;
        _dischargeOnsetMs = onsetMs;
        SetBaselineExpectations();
    }

    private void SetBaselineExpectations()
    {
        if (double.IsFinite(_baselineMassKg))
        {
            _model.ExpectedStrains(_model.StateAtMass(_baselineMassKg, FlowMode.Filling), _expectedFilling);
            var atBaseline = new double[_expectedFilling.Length];
            _model.ExpectedStrains(_model.StateAtMass(_baselineMassKg, FlowMode.Discharging), atBaseline);
            foreach (var ring in _rings)
            {
                ring.ExpectedMeanAtBaseline = ring.ModelGauges.Average(m => ring.Sign * atBaseline[m]);
            }
        }
        else
        {
            Array.Fill(_expectedFilling, double.NaN);
            foreach (var ring in _rings)
            {
                ring.ExpectedMeanAtBaseline = double.NaN;
            }
        }
    }

    private DischargeSummary FinishDischarge(long nowMs, double massKg)
    {
        _baselineValid = false;
        var endMs = _dischargeEndMs >= _dischargeOnsetMs ? _dischargeEndMs : nowMs;
        var endMass = double.IsFinite(_dischargeEndMassKg) ? _dischargeEndMassKg : massKg;
        var seconds = Math.Max(1e-3, (endMs - _dischargeOnsetMs) / 1000.0);
        return new DischargeSummary(SiteId, SiloId, _dischargeOnsetMs, endMs, _baselineMassKg, endMass, (endMass - _baselineMassKg) / seconds,
            [.. _rings.Select(r => new RingPeak(r.Id, r.MaxA1, r.DirectionAtMaxA1, r.MaxA2, r.MaxOverExpected, r.MaxPeakOverMean))]);
    }

    private void LearnThermal(long nowMs, long seenMs)
    {
        if (!_options.LearnThermalSensitivity)
        {
            return;
        }

        foreach (var ring in _rings)
        {
            for (var k = 0; k < ring.Sensors.Length; k++)
            {
                var slot = _slots[ring.Sensors[k]];
                if (Usable(slot, seenMs) && slot.Quality == Quality.Good && double.IsFinite(slot.TemperatureC))
                {
                    ring.Thermal[k].Observe(nowMs, slot.Value, slot.TemperatureC);
                }
            }
        }
    }

    private double SupportLoadPercent(long seenMs, double massKg)
    {
        if (!(_supportCapacityKn > 0))
        {
            return double.NaN;
        }

        var w = _silo.Options.Weighing;
        var n = w.SupportCount;
        if (n < 1)
        {
            return double.NaN;
        }

        // Measured where a support stands on good cells; else its share of the weight (structure + contents).
        var measured = new double[n];
        var known = new bool[n];
        for (var i = 0; i < _slots.Length; i++)
        {
            var support = _supportOfCell[i];
            if (support < 1 || support > n)
            {
                continue;
            }

            var slot = _slots[i];
            if (slot.Quality is Quality.Good or Quality.Uncertain && double.IsFinite(slot.Value) && seenMs - slot.LastMs <= (long)_options.GaugeStaleAfter.TotalMilliseconds)
            {
                measured[support - 1] += slot.Value;
                known[support - 1] = true;
            }
        }

        var share = double.IsFinite(massKg) ? Units.MassKgToWeightKn(massKg + w.StructureMassKg) / n : double.NaN;
        var max = double.NaN;
        for (var s = 0; s < n; s++)
        {
            var load = known[s] ? measured[s] : share;
            if (double.IsFinite(load))
            {
                max = double.IsNaN(max) ? load : Math.Max(max, load);
            }
        }

        return max / _supportCapacityKn * 100.0;
    }

    private double IdleMassChangeKgPerMin(long nowMs, double massKg)
    {
        var windowMs = (long)_options.IdleMassWindow.TotalMilliseconds;
        if (!double.IsFinite(massKg))
        {
            return double.NaN;
        }

        // The inventory filter's first estimates converge (the demo's floor-weighed C1 moves by several hundred kg in its
        // first seconds): the first window after the first estimate is not judged. Before, that start-up was hidden by a
        // short false fill or discharge; an outlet signal that says "closed" now keeps the silo idle through it.
        if (_firstMassMs == long.MinValue)
        {
            _firstMassMs = nowMs;
        }

        if (nowMs - _firstMassMs < windowMs)
        {
            return double.NaN;
        }

        _massHistory.Enqueue((nowMs, massKg));
        while (_massHistory.Count > 0 && nowMs - _massHistory.Peek().Ms > windowMs)
        {
            _massHistory.Dequeue();
        }

        var (oldestMs, oldestKg) = _massHistory.Peek();
        var spanMs = nowMs - oldestMs;
        if (spanMs < windowMs / 2)
        {
            return double.NaN;
        }

        return Math.Abs(massKg - oldestKg) / (windowMs / 60000.0);
    }

    private sealed class SensorSlot(SensorOptions options)
    {
        public SensorOptions Options { get; } = options;

        public double Value = double.NaN;
        public double TemperatureC = double.NaN;
        public Quality? Quality;
        public long LastMs = long.MinValue / 2;
        public int TemperatureSensor = -1;
        public double ZeroMicro = double.NaN;
        public string Reason = "";
        public string BadKey = "";
        public double LastGoodValue = double.NaN;
        public long LastGoodMs = long.MinValue / 2;
    }

    private sealed class HistoryEntry(int sensors)
    {
        public long Ms;
        public double MassKg;
        public readonly double[] Strain = new double[sensors];
        public readonly double[] Temperature = new double[sensors];
    }

    private sealed class Ring(string id, SensorKind kind, double heightM, int[] sensors, int[] modelGauges, RingHarmonicFit fit, ThermalSensitivity[] thermal, double sign, string note)
    {
        public string Id { get; } = id;

        public SensorKind Kind { get; } = kind;

        public double HeightM { get; } = heightM;

        public int[] Sensors { get; } = sensors;

        public int[] ModelGauges { get; } = modelGauges;

        public RingHarmonicFit Fit { get; } = fit;

        public ThermalSensitivity[] Thermal { get; } = thermal;

        /// <summary>−1 for axial (compression is the load), +1 for hoop.</summary>
        public double Sign { get; } = sign;

        public string Note { get; } = note;

        public string A1Key { get; init; } = "";

        public string A2Key { get; init; } = "";

        public string ExcessKey { get; init; } = "";

        public string Detail { get; } = "ring " + id;

        public double[] BaselineStrain { get; } = [.. sensors.Select(_ => double.NaN)];

        public double[] BaselineTemperature { get; } = [.. sensors.Select(_ => double.NaN)];

        public double ExpectedMeanAtBaseline { get; set; } = double.NaN;

        public double MaxA1 { get; private set; } = double.NaN;

        public double DirectionAtMaxA1 { get; private set; } = double.NaN;

        public double MaxA2 { get; private set; } = double.NaN;

        public double MaxOverExpected { get; private set; } = double.NaN;

        public double MaxPeakOverMean { get; private set; } = double.NaN;

        public void ResetPeak() => (MaxA1, DirectionAtMaxA1, MaxA2, MaxOverExpected, MaxPeakOverMean) = (double.NaN, double.NaN, double.NaN, double.NaN, double.NaN);

        public void TrackPeak(RingAssessment a)
        {
            if (double.IsFinite(a.A1Ratio) && !(a.A1Ratio <= MaxA1))
            {
                MaxA1 = a.A1Ratio;
                DirectionAtMaxA1 = a.AsymmetryDirectionDeg;
            }

            MaxA2 = Max(MaxA2, a.A2Ratio);
            MaxOverExpected = Max(MaxOverExpected, a.MeasuredOverExpected);
            MaxPeakOverMean = Max(MaxPeakOverMean, a.PeakOverMean);
        }

        private static double Max(double a, double b) => double.IsNaN(a) ? b : double.IsNaN(b) ? a : Math.Max(a, b);
    }
}
