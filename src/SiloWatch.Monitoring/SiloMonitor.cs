using System.Text;
using SiloWatch.Mechanics;
using SiloWatch.Plant;

namespace SiloWatch.Monitoring;

/// <summary>
/// Inventory of one silo: converts each sample, judges its quality, and feeds a mass/rate Kalman
/// filter with the weighing arrangement's measurement of the contents and its variance.
/// <para>
/// One instance per silo, called from one thread: no locks inside. <see cref="OnSample"/> is the
/// hot path (no allocation); <see cref="Evaluate"/>, <see cref="Readings"/> and the commands allocate.
/// </para>
/// <para>
/// Errors are kept in two parts: the random part (sensor noise, estimated online) goes into the
/// filter, which averages it; the systematic part (cell combined error and span, tare, off-centre
/// load, K·μ and unit weight of the solid) does not average out and is added to the filter's
/// variance when the interval is stated.
/// </para>
/// </summary>
public sealed class SiloMonitor
{
    private const double Z95 = 1.959963984540054;
    private const double KgPerKn = 1000.0 / Units.StandardGravity;

    // Passes of the linearised floor + ring combination and when to stop (share of capacity).
    private const int FusionPasses = 4;
    private const double FusionToleranceOfCapacity = 1e-4;

    private const QualityFlags CarriedSensorFlags = QualityFlags.TemperatureMissing | QualityFlags.Drift | QualityFlags.Spike | QualityFlags.OverCapacity;

    private readonly SiloRef _silo;
    private readonly MonitoringOptions _options;
    private readonly TimeProvider _time;
    private readonly SensorChannel[] _channels;
    private readonly int[] _cells;
    private readonly int[] _ring;
    private readonly double[] _net;
    private readonly double[] _ringAngles;
    private readonly double[] _ringValues;
    private readonly MassRateFilter _filter;
    private readonly ShareDriftDetector? _drift;
    private readonly WeighingArrangement _arrangement;
    private readonly double _supportScale;
    private readonly double _eccentricityLeverage;
    private readonly double _sumCosWeighed;
    private readonly double _sumSinWeighed;
    private readonly double _structureKn;
    private readonly double _ringHeightM;
    private readonly long _cellStaleAfterMs;

    private SiloModel _model;
    private double _unitWeightRelStd;
    private double _kMuRelStd;
    private InventoryCalibration? _calibration;
    private TareRecord? _tare;

    private int _scanMask;
    private long _scanStartMs;
    private long _scanLastMs = long.MinValue;
    private readonly long _scanToleranceMs;
    private int _failedCellMask;
    private int _suspectMask;
    private bool _resetPending;
    private long _lastFusionMs = long.MinValue;
    private double _lastSysVarKg2;
    private double _lastSysUp95Kg = double.NaN;
    private double _lastSysDown95Kg = double.NaN;
    private double _lastConditioning = double.NaN;
    private QualityFlags _lastFlags = QualityFlags.NoData;
    private string _method;
    private long _rejectedSamples;
    private bool _gammaTiedToKMu;
    private bool _asymmetric;
    private long _arrivedMs = long.MinValue;
    private Func<bool>? _hasUnprocessed;

    public SiloMonitor(SiloRef silo, SiloModel model, MonitoringOptions options, TimeProvider time)
    {
        ArgumentNullException.ThrowIfNull(silo);
        ArgumentNullException.ThrowIfNull(model);
        ArgumentNullException.ThrowIfNull(options);
        ArgumentNullException.ThrowIfNull(time);
        _silo = silo;
        _model = model;
        _options = options;
        _time = time;
        var sensors = silo.Options.Sensors;
        _channels = new SensorChannel[sensors.Count];
        for (var i = 0; i < sensors.Count; i++)
        {
            _channels[i] = new SensorChannel(i, sensors[i], options);
        }

        for (var i = 0; i < sensors.Count; i++)
        {
            var pair = sensors[i].TemperatureSensor;
            if (!string.IsNullOrEmpty(pair) && silo.TryGetSensor(pair, out var t) && t.Options.Kind == SensorKind.Temperature)
            {
                _channels[i].TemperatureChannel = t.Index;
            }
        }

        var weighing = silo.Options.Weighing;
        _arrangement = weighing.Arrangement;
        var cells = new List<int>();
        if (_arrangement != WeighingArrangement.None)
        {
            for (var i = 0; i < sensors.Count; i++)
            {
                if (sensors[i].Kind == SensorKind.LoadCell && sensors[i].CapacityKn > 0 && sensors[i].RatedOutputMvPerV > 0)
                {
                    _channels[i].CellIndex = cells.Count;
                    cells.Add(i);
                }
            }
        }

        if (cells.Count > 30)
        {
            throw new NotSupportedException($"silo {silo.Key}: more than 30 load cells are not supported");
        }

        _cells = [.. cells];
        _net = new double[_cells.Length];
        _cellStaleAfterMs = _cells.Length == 0 ? long.MaxValue : _cells.Max(c => _channels[c].StaleAfterMs);
        _scanToleranceMs = _cells.Length == 0 ? 1 : Math.Max(1, _cells.Min(c => _channels[c].PeriodMs) / 2);
        _drift = _cells.Length >= 2
            ? new ShareDriftDetector(_cells.Length, options.DriftLearningTime.TotalSeconds, options.DriftSmoothingTime.TotalSeconds, options.DriftShareTolerance,
                guardS: options.StuckWindow.TotalSeconds + (2 * options.DriftSmoothingTime.TotalSeconds),
                // share_i = (1/n)·[1 + 2(e/R)·cos(θ_i − θ_e)] [D, DOMAIN.md §3]: σ 2·σ(e/R)/n for an unknown offset.
                geometryStd: Math.Max(2 * options.EccentricityRatioStd / _cells.Length, 1e-3))
            : null;
        // Supports: the scale n/m of partial weighing and the leverage of an off-centre load on the weighed set.
        var n = weighing.SupportCount;
        var weighedSupports = _cells.Select(c => sensors[c].Support).Where(s => s >= 1 && s <= n).Distinct().ToArray();
        var m = weighedSupports.Length;
        _supportScale = _arrangement == WeighingArrangement.SomeSupports && m > 0 ? (double)n / m : 1.0;

        // The empty structure's weight is shared equally by all n supports, so the weighed cells of a
        // partially weighed silo carry m/n of it; floor cells carry the weighed floor or hopper itself.
        _structureKn = Units.MassKgToWeightKn(weighing.StructureMassKg) *
            (_arrangement == WeighingArrangement.SomeSupports && n > 0 ? (double)m / n : 1.0);
        foreach (var s in weighedSupports)
        {
            var a = Units.DegToRad(weighing.FirstSupportAngleDeg + (360.0 * (s - 1) / n));
            _sumCosWeighed += Math.Cos(a);
            _sumSinWeighed += Math.Sin(a);
        }

        // R_i = W/n·[1 + 2(e/R)·cos(θ_i − θ_e)] [D, DOMAIN.md §3] ⇒ Σ_weighed R_i·n/m = W·[1 + (2/m)·(e/R)·Σ cos(θ_i − θ_e)].
        _eccentricityLeverage = m > 0 ? 2.0 / m * Math.Sqrt((_sumCosWeighed * _sumCosWeighed) + (_sumSinWeighed * _sumSinWeighed)) : 0;

        // The base axial ring: the lowest ring of axial gauges on a circular wall.
        var ring = new List<int>();
        if (silo.Options.Geometry.Section == SectionShape.Circular && silo.Options.Geometry.WallThicknessM > 0)
        {
            var lowest = sensors
                .Select((s, i) => (s, i))
                .Where(x => x.s.Kind == SensorKind.AxialStrain && !string.IsNullOrEmpty(x.s.Ring) && x.s.GaugeFactor > 0)
                .GroupBy(x => x.s.Ring, StringComparer.Ordinal)
                .OrderBy(g => g.Min(x => x.s.HeightM))
                .FirstOrDefault();
            if (lowest is not null && lowest.Count() >= 3)
            {
                foreach (var (s, i) in lowest)
                {
                    _channels[i].RingIndex = ring.Count;
                    _channels[i].AngleRad = Units.DegToRad(s.AngleDeg);
                    ring.Add(i);
                }

                _ringHeightM = lowest.Min(x => x.s.HeightM);
            }
        }

        _ring = [.. ring];
        _ringAngles = new double[_ring.Length];
        _ringValues = new double[_ring.Length];

        _filter = new MassRateFilter(options.ProcessNoiseKg2PerS3, options.InitialRateStdKgPerS, options.ManeuverGate, options.ManeuverGain);
        (_unitWeightRelStd, _kMuRelStd) = DefaultPropertyStds(model.Material, options);
        _method = MethodName(false);
    }

    public string SiteId => _silo.SiteId;

    public string SiloId => _silo.SiloId;

    /// <summary>The model behind level, volume and the floor-load inversion (replaced by a confirmed calibration).</summary>
    public SiloModel Model => _model;

    /// <summary>The last commanded tare, or null (the structure mass is then the tare estimate).</summary>
    public TareRecord? LastTare => _tare;

    public InventoryCalibration? Calibration => _calibration;

    /// <summary>Net load on the weighing cells at the last complete scan (after tare, failed cells substituted), kN; NaN before one. Calibration points are taken from it.</summary>
    public double LastNetLoadKn { get; private set; } = double.NaN;

    /// <summary>Wall load from the base ring at the last scan (U·n_z, compression positive), kN; NaN when the ring was not used.</summary>
    public double LastWallLoadKn { get; private set; } = double.NaN;

    /// <summary>Wall friction between the base ring and the transition (mechanics model) at the last scan, kN; NaN when the ring was not used.</summary>
    public double LastBelowRingLoadKn { get; private set; } = double.NaN;

    /// <summary>Samples ignored because they named a sensor this silo does not have.</summary>
    public long RejectedSamples => _rejectedSamples;

    /// <summary>
    /// Tells the monitor whether messages of its silo have been received and not yet passed to it
    /// (<paramref name="hasUnprocessed"/> is read whenever staleness is judged, from any thread that judges it).
    /// With it, and <see cref="OnArrival"/> before each message's samples, staleness is judged against
    /// arrival (<see cref="ArrivalsSeenUntil"/>) rather than against how far behind the caller is.
    /// </summary>
    public void TrackArrivals(Func<bool> hasUnprocessed) => _hasUnprocessed = hasUnprocessed ?? throw new ArgumentNullException(nameof(hasUnprocessed));

    /// <summary>
    /// A message received at <paramref name="receivedUnixMs"/> (the evaluation's clock) is being passed
    /// on: its samples follow through <see cref="OnSample"/>. No allocation.
    /// </summary>
    public void OnArrival(long receivedUnixMs) => Volatile.Write(ref _arrivedMs, receivedUnixMs);

    /// <summary>
    /// The time up to which the silo's arrivals have been seen, for a judgement at <paramref name="nowUnixMs"/>:
    /// every staleness judgement of the monitor (sensor flags, the estimate's held and stale, what the alarms
    /// read) is made at this time. It is <paramref name="nowUnixMs"/> when nothing of the silo waits to be
    /// processed (or arrivals are not tracked); while messages of it wait, newer data exists but has not been
    /// seen, so it is the receive time of the last message passed on (no later than <paramref name="nowUnixMs"/>):
    /// a sample is then stale only if it was already too old when it arrived, or if its sensor stopped
    /// while later messages of the silo arrived. A backlog in the caller is not a sensor fault.
    /// </summary>
    public long ArrivalsSeenUntil(long nowUnixMs)
    {
        var arrived = Volatile.Read(ref _arrivedMs);
        if (arrived == long.MinValue || nowUnixMs <= arrived || _hasUnprocessed is not { } waiting || !waiting())
        {
            return nowUnixMs;
        }

        return arrived;
    }

    /// <summary>Converts one sample, judges it and, when a scan of the weighing cells is complete, updates the estimate. No allocation.</summary>
    public void OnSample(in TelemetrySample sample)
    {
        if ((uint)sample.SensorIndex >= (uint)_channels.Length)
        {
            _rejectedSamples++;
            return;
        }

        var ch = _channels[sample.SensorIndex];
        var ts = sample.TimestampMs;
        var raw = sample.Value;
        var o = ch.Options;
        if (ch.CellIndex >= 0)
        {
            BeginCellSample(ch, ts);
        }

        if (ch.LastMs != long.MinValue && ts - ch.LastMs > ch.StaleAfterMs)
        {
            // Back after a gap: its recent history is no longer the present, so a first value that differs
            // from it is news, not a spike (held as one, the value from before the gap would be used).
            ch.Spike.Reset();
            ch.Noise.Break();
        }

        ch.Raw = raw;
        ch.LastMs = ts;

        if (!double.IsFinite(raw) || raw < o.RangeMin || raw > o.RangeMax)
        {
            ch.SampleFlags = QualityFlags.OutOfRange;
            ch.Noise.Break();
            ch.Stuck.Reset();
            AfterCellSample(ch, ts);
            return;
        }

        var flags = QualityFlags.None;
        if (raw <= ch.SaturationLow || raw >= ch.SaturationHigh)
        {
            flags |= QualityFlags.Saturated;
        }

        if (ch.Stuck.Update(raw, ts))
        {
            flags |= QualityFlags.Stuck;
        }

        var spike = ch.Spike.IsSpike(raw);

        double temperatureC = o.ReferenceTemperatureC;
        if (ch.TemperatureChannel >= 0)
        {
            var t = _channels[ch.TemperatureChannel];
            if (t.UsableAt(ts))
            {
                temperatureC = t.Value;
            }
            else
            {
                flags |= QualityFlags.TemperatureMissing;
            }
        }

        var value = ch.Kind switch
        {
            SensorKind.LoadCell => o.CapacityKn > 0 && o.RatedOutputMvPerV > 0 ? LoadCellConversion.ForceKn(raw, o, temperatureC) : double.NaN,
            SensorKind.AxialStrain or SensorKind.HoopStrain => o.GaugeFactor > 0
                ? StrainConversion.StrainMicro(raw, o, _silo.Options.Geometry.WallPoissonRatio, temperatureC)
                : double.NaN,
            _ => raw,
        };

        if (ch.Kind == SensorKind.LoadCell && Math.Abs(value) > o.CapacityKn)
        {
            flags |= QualityFlags.OverCapacity;
        }

        if (spike)
        {
            // Keep the previous value: one wild sample must not move the inventory.
            flags |= QualityFlags.Spike;
            ch.Noise.Break();
        }
        else
        {
            ch.Noise.Update(value);
            ch.Value = value;
            ch.LastTemperatureC = temperatureC;
        }

        ch.SampleFlags = flags;
        AfterCellSample(ch, ts);
    }

    /// <summary>The inventory at a time, for publishing: the filter predicted to <paramref name="nowUnixMs"/>, with the stated uncertainty and quality.</summary>
    public InventoryEstimate Evaluate(long nowUnixMs)
    {
        var flags = _lastFlags;
        var seenMs = ArrivalsSeenUntil(nowUnixMs);
        if (!_filter.Initialised)
        {
            flags |= _cells.Length == 0 ? QualityFlags.InsufficientSensors : QualityFlags.NoData;
            return new InventoryEstimate(SiteId, SiloId, nowUnixMs, double.NaN, double.NaN, double.NaN, double.NaN, double.NaN, double.NaN,
                double.NaN, double.NaN, double.NaN, double.NaN, double.NaN, null, null, flags.Severity(), Reason(flags, seenMs), _method);
        }

        double massKg, rateKgPerS, p00, p11;
        if (seenMs - _lastFusionMs > _cellStaleAfterMs)
        {
            // No weighing data: hold the last estimate rather than extrapolate a rate into the unknown.
            flags |= QualityFlags.Stale | QualityFlags.Held;
            (massKg, rateKgPerS, p00, p11) = (_filter.MassKg, _filter.RateKgPerS, _filter.P00, _filter.P11);
        }
        else
        {
            (massKg, rateKgPerS, p00, _, p11) = _filter.PredictedAt(nowUnixMs);
        }

        var massStd = Math.Sqrt(Math.Max(0, p00) + _lastSysVarKg2);
        var randomHalf = Z95 * Math.Sqrt(Math.Max(0, p00));
        var halfUp = Math.Sqrt((randomHalf * randomHalf) + (_lastSysUp95Kg * _lastSysUp95Kg));
        var halfDown = Math.Sqrt((randomHalf * randomHalf) + (_lastSysDown95Kg * _lastSysDown95Kg));
        var rateStd = Math.Sqrt(Math.Max(0, p11));
        var rho = _model.Expected.BulkDensityKgM3;
        var capacityM3 = _model.CapacityM3;
        var capacityKg = capacityM3 * rho;
        if (massStd > _options.MaxConfidentStdFraction * capacityKg)
        {
            // Not "poorly conditioned": that names the floor-load inversion and belongs to floor weighing alone.
            flags |= QualityFlags.WideUncertainty;
        }

        if (massKg < -Z95 * massStd || massKg > capacityKg * (1 + (2 * _unitWeightRelStd)) + (Z95 * massStd))
        {
            flags |= QualityFlags.OutsidePhysicalRange;
        }

        var volume = massKg / rho;
        var volumeStd = Math.Sqrt(Math.Pow(massStd / rho, 2) + Math.Pow(volume * _unitWeightRelStd, 2));
        var level = _model.LevelAtVolume(Math.Clamp(volume, 0, capacityM3));
        var volumeDown = Math.Sqrt(Math.Pow(halfDown / rho, 2) + Math.Pow(Z95 * volume * _unitWeightRelStd, 2));
        var volumeUp = Math.Sqrt(Math.Pow(halfUp / rho, 2) + Math.Pow(Z95 * volume * _unitWeightRelStd, 2));
        var levelLow = _model.LevelAtVolume(Math.Clamp(volume - volumeDown, 0, capacityM3));
        var levelHigh = _model.LevelAtVolume(Math.Clamp(volume + volumeUp, 0, capacityM3));

        double? timeToEmpty = null;
        double? timeToFull = null;
        var rateThreshold = Math.Max(_options.MinRateKgPerS, Z95 * rateStd);
        if (rateKgPerS < -rateThreshold && massKg > 0)
        {
            timeToEmpty = massKg / -rateKgPerS;
        }
        else if (rateKgPerS > rateThreshold && massKg < capacityKg)
        {
            timeToFull = (capacityKg - massKg) / rateKgPerS;
        }

        return new InventoryEstimate(
            SiteId,
            SiloId,
            nowUnixMs,
            massKg,
            massKg - halfDown,
            massKg + halfUp,
            level,
            levelLow,
            levelHigh,
            volume,
            volume / capacityM3 * 100.0,
            rateKgPerS,
            rateKgPerS - (Z95 * rateStd),
            rateKgPerS + (Z95 * rateStd),
            timeToEmpty,
            timeToFull,
            flags.Severity(),
            Reason(flags, seenMs),
            _method);
    }

    /// <summary>Last converted value, raw value and quality of every sensor, judged now (staleness at <see cref="ArrivalsSeenUntil"/>).</summary>
    public IReadOnlyList<SensorReading> Readings
    {
        get
        {
            var now = ArrivalsSeenUntil(_time.GetUtcNow().ToUnixTimeMilliseconds());
            var list = new SensorReading[_channels.Length];
            for (var i = 0; i < _channels.Length; i++)
            {
                var ch = _channels[i];
                var flags = ch.FlagsAt(now);
                list[i] = new SensorReading(ch.Options.Id, ch.Kind, ch.LastMs == long.MinValue ? 0 : ch.LastMs, ch.Value, ch.EngineeringUnit,
                    ch.Raw, ch.Options.Unit, flags.Severity(), flags.Describe());
            }

            return list;
        }
    }

    /// <summary>Last converted value of a sensor in its engineering unit (kN, microstrain, degC), NaN before the first; no allocation.</summary>
    public double LastValue(int sensorIndex) => _channels[sensorIndex].Value;

    /// <summary>Robust z-score of the last sample of a sensor (diagnostics).</summary>
    public double LastSpikeZ(int sensorIndex) => _channels[sensorIndex].Spike.LastZ;

    /// <summary>Quality flags of one sensor judged at a time, its staleness at <see cref="ArrivalsSeenUntil"/> of that time. No allocation.</summary>
    public QualityFlags SensorFlags(int sensorIndex, long nowUnixMs) => _channels[sensorIndex].FlagsAt(ArrivalsSeenUntil(nowUnixMs));

    /// <summary>
    /// Commanded tare with the silo known empty: the present value of every weighing cell (and of
    /// every wall gauge) becomes its zero. Recorded with when and by whom.
    /// </summary>
    /// <exception cref="InvalidOperationException">a weighing cell has no usable value (the message names it and why).</exception>
    public TareRecord Tare(string by, long nowUnixMs)
    {
        ArgumentException.ThrowIfNullOrWhiteSpace(by);
        var seenMs = ArrivalsSeenUntil(nowUnixMs);
        foreach (var c in _cells)
        {
            var ch = _channels[c];
            if (!ch.UsableAt(seenMs))
            {
                var why = ch.FlagsAt(seenMs).Describe();
                throw new InvalidOperationException($"cannot tare {_silo.Key}: load cell {ch.Options.Id} is {(why.Length == 0 ? "without a value" : why)}");
            }
        }

        var before = Evaluate(nowUnixMs).MassKg;
        var values = new List<TareValue>();
        foreach (var ch in _channels)
        {
            var isWeighing = ch.CellIndex >= 0;
            var isGauge = ch.Kind is SensorKind.AxialStrain or SensorKind.HoopStrain;
            if ((isWeighing || isGauge) && ch.UsableAt(seenMs))
            {
                ch.TareValue = ch.Value;
                ch.TareTemperatureC = ch.LastTemperatureC;
                values.Add(new TareValue(ch.Options.Id, ch.Value, ch.EngineeringUnit));
            }
        }

        _tare = new TareRecord(SiteId, SiloId, nowUnixMs, by, values, before);
        _resetPending = true;
        return _tare;
    }

    /// <summary>Applies a confirmed calibration of the solid (the CLI or journal calls this after a person confirmed the fit).</summary>
    public void ApplyCalibration(InventoryCalibration calibration)
    {
        ArgumentNullException.ThrowIfNull(calibration);
        ArgumentException.ThrowIfNullOrWhiteSpace(calibration.ConfirmedBy);
        var p = _model.Expected;
        var gamma = calibration.UnitWeightKnM3 ?? p.UnitWeightKnM3;
        var kMu = calibration.KMu ?? p.KMu;
        if (!(gamma > 0 && gamma < 100 && kMu > 0 && kMu < 2))
        {
            throw new ArgumentOutOfRangeException(nameof(calibration), $"calibration out of physical range: unit weight {gamma} kN/m3, K·μ {kMu}");
        }

        if (calibration.RingGain is { } ringGain && !(ringGain > 0.5 && ringGain < 2))
        {
            throw new ArgumentOutOfRangeException(nameof(calibration), $"ring gain {ringGain} is outside 0.5..2: check the ring's definition (modulus, thickness, gauge factor, bridge) rather than calibrate it away");
        }

        _model = _model.WithExpected(new SolidProperties(gamma, p.K, kMu / p.K));
        var (gStd, kStd) = DefaultPropertyStds(_model.Material, _options);
        _unitWeightRelStd = calibration.UnitWeightKnM3 is null ? gStd : calibration.UnitWeightRelativeStd ?? gStd;
        _kMuRelStd = calibration.KMu is null ? kStd : calibration.KMuRelativeStd ?? kStd;
        _calibration = calibration;
        _gammaTiedToKMu = calibration.KMu is not null && calibration.UnitWeightKnM3 is null;
        if (_arrangement == WeighingArrangement.FloorOnly)
        {
            _resetPending = true;
        }
    }

    /// <summary>
    /// A point for <see cref="RingGainCalibrator"/> from the last scan, with the contents known by other
    /// means at that moment; null when the base ring was not used in it.
    /// </summary>
    public RingGainPoint? RingGainPointAt(double knownMassKg) =>
        double.IsNaN(LastWallLoadKn) || _lastFusionMs == long.MinValue
            ? null
            : new RingGainPoint(_lastFusionMs, LastNetLoadKn, LastWallLoadKn / (_calibration?.RingGain ?? 1.0), LastBelowRingLoadKn, knownMassKg);

    /// <summary>Tare, learned load shares and calibration, for a restart.</summary>
    public MonitorSnapshot Snapshot() =>
        new(MonitorSnapshot.CurrentVersion, SiteId, SiloId, _time.GetUtcNow().ToUnixTimeMilliseconds(), _tare, _drift?.Pattern(), _calibration);

    /// <summary>
    /// Restores a snapshot taken by <see cref="Snapshot"/>. Returns what could not be restored (a
    /// sensor no longer in the plant definition, a changed cell count), empty when all was.
    /// </summary>
    public IReadOnlyList<string> Restore(MonitorSnapshot snapshot)
    {
        ArgumentNullException.ThrowIfNull(snapshot);
        if (snapshot.SiteId != SiteId || snapshot.SiloId != SiloId)
        {
            throw new ArgumentException($"snapshot is for {snapshot.SiteId}/{snapshot.SiloId}, not {_silo.Key}", nameof(snapshot));
        }

        var problems = new List<string>();
        if (snapshot.Version != MonitorSnapshot.CurrentVersion)
        {
            problems.Add($"snapshot version {snapshot.Version} is not {MonitorSnapshot.CurrentVersion}: nothing restored");
            return problems;
        }

        if (snapshot.Tare is { } tare)
        {
            foreach (var v in tare.Values)
            {
                if (_silo.TryGetSensor(v.SensorId, out var s) && _channels[s.Index].EngineeringUnit == v.Unit)
                {
                    _channels[s.Index].TareValue = v.Value;
                }
                else
                {
                    problems.Add($"tare value of sensor '{v.SensorId}' ({v.Unit}) has no matching sensor now");
                }
            }

            _tare = tare;
            _resetPending = true;
        }

        if (snapshot.LoadShares is { } shares && _drift is not null)
        {
            if (shares.Count == _drift.Count && shares.All(double.IsFinite))
            {
                _drift.SetPattern([.. shares]);
            }
            else
            {
                problems.Add($"load shares for {shares.Count} cells, the silo has {_drift.Count}: learning again");
            }
        }

        if (snapshot.Calibration is { } cal)
        {
            ApplyCalibration(cal);
        }

        return problems;
    }

    // A scan is the weighing cells' samples of one instant. It ends when every usable cell has
    // reported (fused at once), or when a sample of a later instant arrives (the late or missing
    // cells keep their last value). Grouping by timestamp, not by arrival order, keeps a scan from
    // mixing two instants however the gateway orders its samples.
    private void BeginCellSample(SensorChannel ch, long ts)
    {
        if (_scanMask == 0)
        {
            _scanStartMs = ts;
            return;
        }

        if (ts - _scanStartMs >= _scanToleranceMs || ts < _scanStartMs || (_scanMask & (1 << ch.CellIndex)) != 0)
        {
            FuseScan(_scanLastMs);
            _scanStartMs = ts;
        }
    }

    private void AfterCellSample(SensorChannel ch, long ts)
    {
        if (ch.CellIndex < 0)
        {
            return;
        }

        _scanMask |= 1 << ch.CellIndex;
        _scanLastMs = Math.Max(_scanLastMs, ts);
        var required = 0;
        for (var k = 0; k < _cells.Length; k++)
        {
            if (_channels[_cells[k]].UsableAt(ts))
            {
                required |= 1 << k;
            }
        }

        if ((_scanMask & required) == required && (required & _scanMask) != 0)
        {
            FuseScan(_scanLastMs);
        }
    }

    private void FuseScan(long ts)
    {
        _scanMask = 0;
        _scanLastMs = long.MinValue;
        var flags = QualityFlags.None;
        var used = 0;
        double sumNet = 0, randVarKn = 0, sysVarKn = 0;
        var failed = 0;
        var tared = true;
        for (var k = 0; k < _cells.Length; k++)
        {
            var ch = _channels[_cells[k]];
            if (!ch.UsableAt(ts))
            {
                failed |= 1 << k;
                _net[k] = double.NaN;
            }
            else
            {
                _net[k] = ch.Value - (double.IsNaN(ch.TareValue) ? _structureKn / _cells.Length : ch.TareValue);
            }
        }

        if (_drift is not null)
        {
            // A cell whose load jumped away from the others' alone is left out at once (see ShareDriftDetector.Suspects).
            var roughKn = 0.0;
            foreach (var f in _net)
            {
                roughKn += double.IsNaN(f) ? 0 : f;
            }

            _suspectMask = _drift.Suspects(_net, _suspectMask & ~failed, roughKn * KgPerKn > _options.DriftMinLoadFraction * _model.CapacityKg, _options.DriftExcludeFactor);
            failed |= _suspectMask;
        }

        if (failed != 0 && _drift is not null)
        {
            // Shares from a clean period before the failure could have begun (the detector keeps them dated).
            var mask = _drift.BeginSubstitution(failed, ts);
            for (var k = 0; k < _cells.Length; k++)
            {
                _channels[_cells[k]].Drifting = (((mask & ~failed) | _suspectMask) & (1 << k)) != 0;
            }
        }

        double sumShareUsed = 0, failedShareStd = 0, driftShare2 = 0;
        for (var k = 0; k < _cells.Length; k++)
        {
            var ch = _channels[_cells[k]];
            if ((failed & (1 << k)) != 0)
            {
                failedShareStd += _drift?.SubstituteShareStd(k, ts) ?? 0;
                _net[k] = double.NaN;
                continue;
            }

            var tareKn = ch.TareValue;
            if (double.IsNaN(tareKn))
            {
                tareKn = _structureKn / _cells.Length;
                tared = false;
            }

            var net = ch.Value - tareKn;
            _net[k] = net;
            sumNet += net;
            sumShareUsed += failed != 0 && _drift is not null ? _drift.SubstituteShare(k) : 1.0;
            randVarKn += ch.Noise.Variance;
            sysVarKn += CellSystematicVarKn2(ch.Options, net, ts);
            if (ch.Drifting && _drift is not null)
            {
                // Drifting but still used: widen by how far its share has moved (of the whole net load, below).
                driftShare2 += _drift.Departure(k) * _drift.Departure(k);
            }

            flags |= ch.FlagsAt(ts) & CarriedSensorFlags;
            used++;
        }

        sysVarKn += driftShare2 * Math.Max(sumNet, 0) * Math.Max(sumNet, 0);
        _failedCellMask = failed;
        if (used == 0 || used * 2 < _cells.Length || (failed != 0 && _drift is null))
        {
            _lastFlags = QualityFlags.InsufficientSensors | (flags & CarriedSensorFlags);
            return;
        }

        if (!tared)
        {
            flags |= QualityFlags.NotTared;
            var s = _options.StructureMassUncertaintyPct / 100.0 * _structureKn;
            sysVarKn += s * s;
        }

        double totalKn;
        if (failed != 0)
        {
            // Failed cells replaced by their expected share of the total [D: Σ_used F = W·Σ_used share].
            totalKn = sumNet / sumShareUsed;
            randVarKn /= sumShareUsed * sumShareUsed;
            sysVarKn /= sumShareUsed * sumShareUsed;
            var sub = totalKn * failedShareStd / sumShareUsed;
            sysVarKn += sub * sub;
            flags |= QualityFlags.Substituted;
        }
        else
        {
            totalKn = sumNet;
            UpdateDrift(ts, totalKn, clean: (flags & QualityFlags.Spike) == 0);
        }

        LastNetLoadKn = totalKn;
        LastWallLoadKn = double.NaN;
        LastBelowRingLoadKn = double.NaN;
        double massKg, randVarKg, sysVarKg;
        var method = MethodName(false);
        switch (_arrangement)
        {
            case WeighingArrangement.AllSupports:
                (massKg, randVarKg, sysVarKg) = (totalKn * KgPerKn, randVarKn * KgPerKn * KgPerKn, sysVarKn * KgPerKn * KgPerKn);
                break;
            case WeighingArrangement.SomeSupports:
                (massKg, randVarKg, sysVarKg, flags) = PartialWeighing(totalKn, randVarKn, sysVarKn, flags, ts);
                break;
            case WeighingArrangement.FloorOnly:
                if (!FloorWeighing(totalKn, randVarKn, sysVarKn, ref flags, ts, out massKg, out randVarKg, out sysVarKg, out var withRing))
                {
                    _lastFlags = flags;
                    _method = MethodName(withRing);
                    return;
                }

                method = MethodName(withRing);
                break;
            default:
                return;
        }

        if (_resetPending || !_filter.Initialised || ts - _lastFusionMs > 10 * _cellStaleAfterMs)
        {
            _filter.Reset(ts, massKg, randVarKg);
            _resetPending = false;
        }
        else
        {
            _filter.Update(ts, massKg, randVarKg);
        }

        var dtS = _lastFusionMs == long.MinValue ? 0.0 : (ts - _lastFusionMs) / 1000.0;
        _lastFusionMs = ts;
        _lastSysVarKg2 = sysVarKg;
        if (!_asymmetric)
        {
            _lastSysUp95Kg = _lastSysDown95Kg = Z95 * Math.Sqrt(sysVarKg);
        }

        _asymmetric = false;
        _lastFlags = flags;
        _method = method;
        ZeroTracking(ts, dtS);
    }

    private (double MassKg, double RandVarKg, double SysVarKg, QualityFlags Flags) PartialWeighing(
        double weighedKn, double randVarKn, double sysVarKn, QualityFlags flags, long ts)
    {
        var totalKn = weighedKn * _supportScale;
        var randVar = randVarKn * _supportScale * _supportScale;
        var sysVar = sysVarKn * _supportScale * _supportScale;
        var residualStd = _options.EccentricityRatioStd;
        // An untared ring is not used here: its gauges' zeros are known to a few microstrain, as much as the
        // first harmonic an off-centre load of a few percent of the radius gives on a light wall share.
        if (TryRingFit(ts, out var c0, out var a1, out var b1, out var ringNoiseVar, out var ringSysVar, out var untared) && !untared && Math.Abs(c0) > 1.0)
        {
            // Wall ring: n(θ) = n0·[1 + 2(e/r)·cos(θ − θ_e)] for a thin shell under N and M = N·e [D];
            // (a1, b1)/c0 points at the load's offset (compression negative on both). Referred to the support radius.
            var r = 0.5 * _silo.Options.Geometry.DiameterM;
            var rs = _silo.Options.Weighing.SupportRadiusM > 0 ? _silo.Options.Weighing.SupportRadiusM : r;
            // σ of a1 (and b1) from the gauges' own errors: a least-squares first harmonic over N gauges has 2σ²/N,
            // i.e. twice the mean's variance [D]. Referred to e/R it is large while c0 is small (a nearly empty
            // silo, or an untared ring whose zeros and sun bowing are a good part of what it reads).
            var sigmaMeas = Math.Sqrt(2 * (ringNoiseVar + ringSysVar)) / Math.Abs(c0) * r / (2 * rs);
            var sigmaPrior = _options.EccentricityRatioStd;
            // The ring's offset combined with the prior (zero mean, σ_prior) by inverse variances [D: Gaussian conjugate update].
            var weight = sigmaPrior * sigmaPrior / ((sigmaPrior * sigmaPrior) + (sigmaMeas * sigmaMeas));
            var posteriorVar = weight * sigmaMeas * sigmaMeas;
            var ex = weight * a1 / c0 * r / (2 * rs);
            var ey = weight * b1 / c0 * r / (2 * rs);
            var m = _supportScale > 0 ? _silo.Options.Weighing.SupportCount / _supportScale : 1;
            var correction = 1 + (2.0 / m * ((ex * _sumCosWeighed) + (ey * _sumSinWeighed)));
            if (correction > 0.2)
            {
                totalKn /= correction;
                randVar /= correction * correction;
                sysVar /= correction * correction;
                // The wall share's offset stands for the whole load's only roughly: half the prior spread stays.
                residualStd = Math.Min(sigmaPrior, Math.Sqrt(posteriorVar + (0.25 * sigmaPrior * sigmaPrior)));
                if (weight < 0.5)
                {
                    flags |= QualityFlags.PartialWeighing;
                }
            }
            else
            {
                flags |= QualityFlags.PartialWeighing;
            }
        }
        else
        {
            flags |= QualityFlags.PartialWeighing;
        }

        var ecc = totalKn * _eccentricityLeverage * residualStd;
        sysVar += ecc * ecc;
        return (totalKn * KgPerKn, randVar * KgPerKn * KgPerKn, sysVar * KgPerKn * KgPerKn, flags);
    }

    private bool FloorWeighing(double floorKn, double randVarKn, double sysVarKn, ref QualityFlags flags, long ts,
        out double massKg, out double randVarKg, out double sysVarKg, out bool withRing)
    {
        massKg = randVarKg = sysVarKg = double.NaN;
        var p = _model.Expected;
        var inv = _model.InvertFloorLoad(floorKn, p);
        withRing = _ring.Length >= 3 && RingTotal(floorKn, randVarKn, sysVarKn, inv, ts, ref flags, out massKg, out randVarKg, out sysVarKg);
        if (!withRing && _ring.Length >= 3)
        {
            flags |= QualityFlags.WallRingUnavailable;
        }

        var floorFlags = QualityFlags.None;
        var floorOk = InvertFloor(floorKn, randVarKn, sysVarKn, inv, ref floorFlags, out var mF, out var randF, out var sysF, out var upF, out var downF, out var dmdF);
        if (!withRing)
        {
            flags |= floorFlags;
            (massKg, randVarKg, sysVarKg) = (mF, randF, sysF);
            return floorOk;
        }

        // Both: the floor load's own estimate and floor + wall ring, combined by their variances. They share the
        // floor load's errors (covariance dm_F/dF · 1 · var F) [D: best linear unbiased combination of two
        // correlated estimates]; the ring takes over where the inversion is poorly conditioned or fails.
        var ringMassKg = massKg;
        var ringRandKg = randVarKg;
        var ringSysKg = sysVarKg;
        var ringSys95 = Z95 * Math.Sqrt(ringSysKg);
        if (!floorOk || !double.IsFinite(mF))
        {
            _lastSysUp95Kg = _lastSysDown95Kg = ringSys95;
            _asymmetric = true;
            _lastConditioning = 1.0;
            return true;
        }

        flags |= floorFlags & QualityFlags.OutsidePhysicalRange;
        // The floor load's estimate and its sensitivities are linearised at the mass the two agree on, found by a
        // few Gauss–Newton passes from the ring's [D: iterated linearisation]. Linearised at the inversion's own
        // answer instead, a K·μ well above the library's near saturation (the floor load then says little about
        // the mass) puts the floor's estimate far too low and, evaluated down there, with a small stated spread:
        // the combination followed it (one benchmark run with K·μ 46 % above the library read 9 % of capacity low
        // with the ring right).
        var capacityKg = _model.CapacityKg;
        var linearisedAt = ringMassKg;
        for (var pass = 0; pass < FusionPasses; pass++)
        {
            if (!FloorAtMass(floorKn, sysVarKn, linearisedAt, out mF, out sysF, out upF, out downF, out dmdF))
            {
                // The floor load does not move with the mass there: the ring alone.
                (massKg, randVarKg, sysVarKg) = (ringMassKg, ringRandKg, ringSysKg);
                _lastSysUp95Kg = _lastSysDown95Kg = ringSys95;
                break;
            }

            randF = dmdF * dmdF * randVarKn;
            var covRand = dmdF * KgPerKn * randVarKn;
            var covSys = dmdF * KgPerKn * sysVarKn;
            var varF = randF + sysF;
            var varR = ringRandKg + ringSysKg;
            var denominator = varF + varR - (2 * (covRand + covSys));
            var w = denominator > 0 ? Math.Clamp((varR - covRand - covSys) / denominator, 0, 1) : 0;
            var v = 1 - w;
            massKg = (w * mF) + (v * ringMassKg);
            randVarKg = Math.Max(0, (w * w * randF) + (v * v * ringRandKg) + (2 * w * v * covRand));
            var zc = Z95 * Z95 * covSys;
            var up2 = (w * w * upF * upF) + (v * v * ringSys95 * ringSys95) + (2 * w * v * zc);
            var down2 = (w * w * downF * downF) + (v * v * ringSys95 * ringSys95) + (2 * w * v * zc);
            sysVarKg = Math.Max(0, (w * w * sysF) + (v * v * ringSysKg) + (2 * w * v * covSys));
            _lastSysUp95Kg = Math.Sqrt(Math.Max(up2, Z95 * Z95 * sysVarKg * 0.25));
            _lastSysDown95Kg = Math.Sqrt(Math.Max(down2, Z95 * Z95 * sysVarKg * 0.25));
            if (Math.Abs(massKg - linearisedAt) < FusionToleranceOfCapacity * capacityKg)
            {
                break;
            }

            linearisedAt = massKg;
        }

        _asymmetric = true;
        _lastConditioning = 1.0;
        return true;
    }

    /// <summary>
    /// The floor load's estimate of the mass linearised at <paramref name="atKg"/>: m + (F − F(m))/F'(m) with the
    /// expected properties, its systematic variance (floor-load errors, K·μ and γ taken as floor-load errors at
    /// that mass) and one-sided 95 % deviations from the 95 % values of K·μ and γ. False where the floor load
    /// does not grow with the mass. At the inversion's own answer it is the inversion with its sensitivities.
    /// </summary>
    private bool FloorAtMass(double floorKn, double sysVarKn, double atKg, out double massKg, out double sysVarKg,
        out double up95Kg, out double down95Kg, out double dmdF)
    {
        massKg = sysVarKg = up95Kg = down95Kg = dmdF = double.NaN;
        var p = _model.Expected;
        var m = Math.Max(0, atKg);
        var at = _model.FloorLoadAtMassKn(m, p);
        var dm = Math.Max(1e-4 * _model.CapacityKg, 1.0);
        var slopeKnPerKg = (_model.FloorLoadAtMassKn(m + dm, p) - at) / dm;
        if (!(slopeKnPerKg > 1e-9 / KgPerKn))
        {
            return false;
        }

        dmdF = 1.0 / slopeKnPerKg;
        massKg = m + ((floorKn - at) * dmdF);
        var (gammaStd, residualKn) = FloorPropertyTerms();
        var floorSysKn = sysVarKn + (residualKn * residualKn);
        const double h = 0.01;
        // A property change at fixed mass moves the floor load by ΔF: the floor's estimate moves by −ΔF·dm/dF.
        var dmdLnKMu = -(_model.FloorLoadAtMassKn(m, p.WithKMu(p.KMu * (1 + h))) - at) / h * dmdF;
        var dmdLnGamma = -(_model.FloorLoadAtMassKn(m, p with { UnitWeightKnM3 = p.UnitWeightKnM3 * (1 + h) }) - at) / h * dmdF;
        sysVarKg = (dmdF * dmdF * floorSysKn) + Math.Pow(dmdLnKMu * _kMuRelStd, 2) + Math.Pow(dmdLnGamma * gammaStd, 2);
        double up2 = Math.Pow(Z95 * dmdF, 2) * floorSysKn, down2 = up2;
        for (var sign = -1.0; sign <= 1.0; sign += 2.0)
        {
            var pk = p.WithKMu(p.KMu * Math.Exp(sign * Z95 * _kMuRelStd));
            var pg = p with { UnitWeightKnM3 = p.UnitWeightKnM3 * (1 + (sign * Z95 * gammaStd)) };
            AddToSide((at - _model.FloorLoadAtMassKn(m, pk)) * dmdF, ref up2, ref down2);
            AddToSide((at - _model.FloorLoadAtMassKn(m, pg)) * dmdF, ref up2, ref down2);
        }

        up95Kg = Math.Sqrt(up2);
        down95Kg = Math.Sqrt(down2);
        return true;
    }

    /// <summary>
    /// σ of the unit weight where it moves the mass at a floor load, and the calibrated curve's residual floor-load error, kN.
    /// After a calibration that held γ, the fit pinned the floor load against known masses over the fill: a
    /// different γ would have been met by a different K·μ along the same curve, so the mass at a floor load
    /// is left with the fit's K·μ uncertainty (which carries the fit's residuals), and γ moves only the
    /// level and volume [D]. The calibrated curve misses the plant's by its fit residuals (a shape Janssen
    /// cannot follow, not noise): a floor-load error that does not average.
    /// </summary>
    private (double GammaStd, double ResidualKn) FloorPropertyTerms() =>
        (_gammaTiedToKMu ? 0 : _unitWeightRelStd, _calibration?.FloorLoadResidualKn ?? 0);

    // Total = floor + U·n_z at the ring + the friction between ring and transition (model) [D, DOMAIN.md §3].
    private bool RingTotal(double floorKn, double randVarKn, double sysVarKn, in InversionResult inv, long ts, ref QualityFlags flags,
        out double massKg, out double randVarKg, out double sysVarKg)
    {
        massKg = randVarKg = sysVarKg = double.NaN;
        if (!TryRingFit(ts, out var c0, out _, out _, out var ringNoiseMicro2, out var ringSysMicro2, out var ringUntared))
        {
            return false;
        }

        if (ringUntared)
        {
            flags |= QualityFlags.WallRingNotTared;
            if (!_options.FuseUntaredRing)
            {
                return false;
            }
        }

        var g = _silo.Options.Geometry;
        var prior = _filter.Initialised ? _filter.MassKg : inv.HasLevel ? inv.MassKg : floorKn * KgPerKn;
        var state = _model.StateAtMass(Math.Max(0, prior));
        var atRing = _model.WallAt(state, _ringHeightM);
        var atBase = _model.WallAt(state, 0);
        var hoopStressKPa = double.IsFinite(atRing.HoopForceKnPerM) ? atRing.HoopForceKnPerM / g.WallThicknessM : 0;
        var axialStressKPa = MembraneForces.AxialStressFromAxialStrainKPa(c0, hoopStressKPa, g.WallYoungsModulusGPa, g.WallPoissonRatio);
        var nzKnPerM = -MembraneForces.ForcePerMetreKnPerM(axialStressKPa, g.WallThicknessM);
        var gain = _calibration?.RingGain ?? 1.0;
        var gainStd = _calibration?.RingGain is not null ? _calibration.RingGainRelativeStd ?? _options.WallRingRelativeStd : _options.WallRingRelativeStd;
        var wallKn = gain * _model.PerimeterM * nzKnPerM;
        var belowKn = _model.PerimeterM * Math.Max(0, atBase.AxialForceKnPerM - atRing.AxialForceKnPerM);
        LastWallLoadKn = wallKn;
        LastBelowRingLoadKn = belowKn;
        var perMicro = gain * _model.PerimeterM * g.WallYoungsModulusGPa * g.WallThicknessM;
        var ringRand = perMicro * perMicro * ringNoiseMicro2;
        // The hoop stress behind the Poisson term is the model's, from K and μ as uncertain as K·μ is taken
        // to be (p_h = K·p_v grows with K near the top and goes as 1/μ at saturation) [D]; a wrong one moves
        // the wall load by U·t·ν·Δσ_θ (a K·μ 45 % above the library's put 2.5 % of the wall load on it).
        var hoopKn = gain * _model.PerimeterM * g.WallThicknessM * g.WallPoissonRatio * hoopStressKPa * _kMuRelStd;
        var ringSys = Math.Pow(wallKn * gainStd, 2) + Math.Pow(0.5 * belowKn, 2) + (hoopKn * hoopKn) + (perMicro * perMicro * ringSysMicro2);
        massKg = (floorKn + wallKn + belowKn) * KgPerKn;
        randVarKg = (randVarKn + ringRand) * KgPerKn * KgPerKn;
        sysVarKg = (sysVarKn + ringSys) * KgPerKn * KgPerKn;
        return true;
    }

    private bool InvertFloor(double floorKn, double randVarKn, double sysVarKn, in InversionResult inv, ref QualityFlags flags,
        out double massKg, out double randVarKg, out double sysVarKg, out double up95Kg, out double down95Kg, out double dmdF)
    {
        massKg = randVarKg = sysVarKg = up95Kg = down95Kg = double.NaN;
        dmdF = KgPerKn;
        var p = _model.Expected;
        switch (inv.Status)
        {
            case InversionStatus.AboveSaturation:
                flags |= QualityFlags.NoSolution;
                _lastConditioning = double.PositiveInfinity;
                return false;
            case InversionStatus.Empty:
                massKg = floorKn * KgPerKn;
                randVarKg = randVarKn * KgPerKn * KgPerKn;
                sysVarKg = sysVarKn * KgPerKn * KgPerKn;
                up95Kg = down95Kg = Z95 * Math.Sqrt(sysVarKg);
                _lastConditioning = 1.0;
                return true;
            case InversionStatus.AboveFullLevel:
                flags |= QualityFlags.OutsidePhysicalRange;
                break;
        }

        // Sensitivities by finite differences through the mechanics model's inversion:
        // ∂m/∂F (load noise and load-cell errors), ∂m/∂ln(K·μ) and ∂m/∂ln γ (properties of the solid).
        var m0 = inv.MassKg;
        var dF = Math.Max(1e-3 * floorKn, 0.05);
        var capacityKg = _model.CapacityKg;
        dmdF = Slope(_model.InvertFloorLoad(floorKn + dF, p), m0, dF, capacityKg);
        const double h = 0.01;
        var dmdLnKMu = Slope(_model.InvertFloorLoad(floorKn, p.WithKMu(p.KMu * (1 + h))), m0, h, capacityKg);
        var pGamma = p with { UnitWeightKnM3 = p.UnitWeightKnM3 * (1 + h) };
        var dmdLnGamma = Slope(_model.InvertFloorLoad(floorKn, pGamma), m0, h, capacityKg);
        var (gammaStd, residualKn) = FloorPropertyTerms();
        sysVarKn += residualKn * residualKn;

        massKg = m0;
        randVarKg = dmdF * dmdF * randVarKn;
        sysVarKg = (dmdF * dmdF * sysVarKn) + Math.Pow(dmdLnKMu * _kMuRelStd, 2) + Math.Pow(dmdLnGamma * gammaStd, 2);

        // The inversion is far from linear near saturation: the 95 % bounds come from inverting at the
        // 95 % values of K·μ and γ (each side combined in quadrature); past saturation the upper bound is open.
        double up2 = Math.Pow(Z95 * dmdF, 2) * sysVarKn, down2 = up2;
        // Two sides, two properties, written out: a span of the properties built in the loop would be put on the heap.
        for (var sign = -1.0; sign <= 1.0; sign += 2.0)
        {
            var pk = p.WithKMu(p.KMu * Math.Exp(sign * Z95 * _kMuRelStd));
            var pg = p with { UnitWeightKnM3 = p.UnitWeightKnM3 * (1 + (sign * Z95 * gammaStd)) };
            AddToSide(Deviation(_model.InvertFloorLoad(floorKn, pk), m0, capacityKg), ref up2, ref down2);
            AddToSide(Deviation(_model.InvertFloorLoad(floorKn, pg), m0, capacityKg), ref up2, ref down2);
        }

        up95Kg = _lastSysUp95Kg = Math.Sqrt(up2);
        down95Kg = _lastSysDown95Kg = Math.Sqrt(down2);
        _asymmetric = true;
        _lastConditioning = m0 > 0 ? Math.Abs(dmdF) * floorKn / m0 : 1.0;
        if (_lastConditioning > _options.ConditioningLimit)
        {
            flags |= QualityFlags.PoorlyConditioned;
        }

        return true;

        // A perturbed inversion past saturation: the derivative is unbounded; say so by the capacity per step.
        static double Slope(in InversionResult r, double m0, double step, double capacityKg) =>
            r.HasLevel ? (r.MassKg - m0) / step : capacityKg / step;

        // The same past saturation: the upper side is open, taken as far as half again the capacity.
        static double Deviation(in InversionResult r, double m0, double capacityKg) =>
            r.HasLevel ? r.MassKg - m0 : Math.Max((capacityKg * 1.5) - m0, 0);
    }

    // A one-sided 95 % deviation adds to the upper bound's square when positive, else to the lower's.
    private static void AddToSide(double deviation, ref double up2, ref double down2)
    {
        if (deviation > 0)
        {
            up2 += deviation * deviation;
        }
        else
        {
            down2 += deviation * deviation;
        }
    }

    /// <param name="meanSysVar">Variance of the ring mean from thermal residuals and, for untared gauges, their zeros, microstrain².</param>
    /// <param name="untared">Some gauge had no commanded tare: its installed zero (the configured no-load output) was used.</param>
    private bool TryRingFit(long ts, out double c0, out double a1, out double b1, out double meanNoiseVar, out double meanSysVar, out bool untared)
    {
        c0 = a1 = b1 = meanNoiseVar = meanSysVar = 0;
        untared = false;
        var count = 0;
        for (var j = 0; j < _ring.Length; j++)
        {
            var ch = _channels[_ring[j]];
            if (!RingGaugeUsable(ch, ts))
            {
                continue;
            }

            // Without a tare the converted strain is already against the bridge's configured no-load output
            // (StrainConversion), so the gauge reads the wall's strain since it was empty, known less well.
            var tared = !double.IsNaN(ch.TareValue);
            _ringAngles[count] = ch.AngleRad;
            _ringValues[count] = tared ? ch.Value - ch.TareValue : ch.Value;
            meanNoiseVar += ch.Noise.Variance;
            var since = tared ? ch.TareTemperatureC : ch.Options.ReferenceTemperatureC;
            if (double.IsFinite(since) && double.IsFinite(ch.LastTemperatureC))
            {
                // Thermal output known only to a few tens of percent: what is left after compensation since the tare (or the reference temperature).
                var th = _options.GaugeThermalOutputUncertaintyPct / 100.0 * ch.Options.ThermalOutputMicroPerK * (ch.LastTemperatureC - since);
                meanSysVar += th * th;
            }

            if (!tared)
            {
                untared = true;
                meanSysVar += _options.GaugeZeroUncertaintyMicro * _options.GaugeZeroUncertaintyMicro;
            }

            count++;
        }

        if (count >= 3 && _options.GaugeSunBowMicroPerK > 0)
        {
            // Sun on one side bows the shell: apparent axial strain with the local warming (DOMAIN.md §3), not
            // compensated. The warming is taken against the ring's coolest gauge (the shaded side), and the
            // apparent strains of one sun are not independent: they add before the mean, not in quadrature.
            var minT = double.PositiveInfinity;
            var sumT = 0.0;
            var withT = 0;
            for (var j = 0; j < _ring.Length; j++)
            {
                var ch = _channels[_ring[j]];
                if (RingGaugeUsable(ch, ts) && double.IsFinite(ch.LastTemperatureC) && ch.TemperatureChannel >= 0)
                {
                    minT = Math.Min(minT, ch.LastTemperatureC);
                    sumT += ch.LastTemperatureC;
                    withT++;
                }
            }

            if (withT >= 3)
            {
                // meanSysVar is divided by count² below: a common error of σ on every gauge enters as (count·σ)².
                var bow = _options.GaugeSunBowMicroPerK * ((sumT / withT) - minT) * count;
                meanSysVar += bow * bow;
            }
        }

        if (count < 3)
        {
            return false;
        }

        // The mean over n gauges has 1/n of one gauge's noise variance.
        meanNoiseVar /= (double)count * count;
        meanSysVar /= (double)count * count;
        return RingFit.TryFit(_ringAngles.AsSpan(0, count), _ringValues.AsSpan(0, count), out c0, out a1, out b1);
    }

    // A ring gauge whose paired temperature is missing is left out of the ring: compensated at its reference
    // temperature instead, its thermal output alone (1.5 µε/K on the demo's gauges) is a fifth of a tonne per K of
    // wall load on a concrete ring (U·E·t ≈ 200 kN per µε), and a night 10 K below the reference reads 300 t.
    private static bool RingGaugeUsable(SensorChannel ch, long ts) =>
        ch.UsableAt(ts) && (ch.SampleFlags & QualityFlags.TemperatureMissing) == 0;

    private void UpdateDrift(long ts, double totalKn, bool clean)
    {
        if (_drift is null)
        {
            return;
        }

        var significant = totalKn * KgPerKn > _options.DriftMinLoadFraction * _model.CapacityKg;
        var mask = _drift.Update(_net, ts, significant, clean);
        for (var k = 0; k < _cells.Length; k++)
        {
            _channels[_cells[k]].Drifting = (mask & (1 << k)) != 0;
        }
    }

    private void ZeroTracking(long ts, double dtS)
    {
        if (!_options.ZeroTrackingEnabled || _tare is null || dtS <= 0)
        {
            return;
        }

        var band = _options.ZeroTrackingBandPct / 100.0 * _model.CapacityKg;
        if (Math.Abs(_filter.MassKg) > band || Math.Abs(_filter.RateKgPerS) > _options.MinRateKgPerS)
        {
            return;
        }

        // Pull each cell's zero towards its present value with the tracking time constant; the filter follows.
        var alpha = 1 - Math.Exp(-dtS / Math.Max(1.0, _options.ZeroTrackingTime.TotalSeconds));
        var shiftKn = 0.0;
        foreach (var c in _cells)
        {
            var ch = _channels[c];
            if (ch.UsableAt(ts) && !double.IsNaN(ch.TareValue))
            {
                var d = alpha * (ch.Value - ch.TareValue);
                ch.TareValue += d;
                shiftKn += d;
            }
        }

        _filter.Shift(-shiftKn * _supportScale * KgPerKn);
    }

    private double CellSystematicVarKn2(SensorOptions cell, double netKn, long ts)
    {
        // Zero stability since the tare: grows linearly with the hours since, up to a ceiling [D: a choice; datasheets give creep and zero return, not this].
        var hours = _tare is null ? 0 : Math.Max(0, (ts - _tare.TimestampMs) / 3_600_000.0);
        var zeroPct = Math.Min(_options.LoadCellZeroDriftPctRoPerHour * hours, _options.LoadCellZeroDriftMaxPctRo);
        var zero = zeroPct / 100.0 * cell.CapacityKn;
        // Combined error as a rectangular bound (bound/√3); the cells' parts add in quadrature over the scan. Span error on the net load.
        var combined = LoadCellErrorBudget.CellStandardUncertaintyKn(_options.LoadCellCombinedErrorPctRo, cell.CapacityKn);
        var span = _options.LoadCellSpanUncertaintyPct / 100.0 * netKn;
        return (combined * combined) + (span * span) + (zero * zero);
    }

    private string Reason(QualityFlags flags, long nowMs)
    {
        var text = flags.Describe();
        if (_failedCellMask == 0 && (flags & QualityFlags.Drift) == 0)
        {
            return text;
        }

        var sb = new StringBuilder(text);
        for (var k = 0; k < _cells.Length; k++)
        {
            var ch = _channels[_cells[k]];
            var f = ch.FlagsAt(nowMs);
            if ((_failedCellMask & (1 << k)) != 0 || ch.Drifting)
            {
                sb.Append(sb.Length > 0 ? "; " : "").Append(ch.Options.Id).Append(": ").Append(f.Describe());
            }
        }

        if (double.IsFinite(_lastConditioning) && _lastConditioning > _options.ConditioningLimit)
        {
            sb.Append(sb.Length > 0 ? "; " : "").Append(System.Globalization.CultureInfo.InvariantCulture, $"1 % of floor load is {_lastConditioning:0.#} % of mass");
        }

        return sb.ToString();
    }

    private string MethodName(bool withRing) => _arrangement switch
    {
        WeighingArrangement.AllSupports => "all-supports",
        WeighingArrangement.SomeSupports => "some-supports",
        WeighingArrangement.FloorOnly => withRing ? "floor+wall-rings" : "floor-janssen",
        _ => "none",
    };

    /// <summary>σ of the unit weight (relative) and of ln(K·μ) from the options, else from the material.</summary>
    internal static (double UnitWeightRelStd, double KMuRelStd) DefaultPropertyStds(Material material, MonitoringOptions options)
    {
        // Unit weight: uniform over the library's [lower, upper] range: σ = (u − l)/√12 [D: a choice].
        var gamma = options.UnitWeightRelativeStd > 0
            ? options.UnitWeightRelativeStd
            : (material.UnitWeightUpperKnM3 - material.UnitWeightLowerKnM3) / Math.Sqrt(12) / material.UnitWeightMeanKnM3;

        // K·μ: the characteristic values X_m·a and X_m/a taken as 95 % fractiles of a log-normal [D: EN 1990 reads
        // characteristic values as 5 %/95 % fractiles, M], so σ_ln = ln(a)/1.645 for each. K and μ are not taken as
        // independent: the library's factors are from memory for most solids (materials.json says which), and a
        // solid that packs more densely moves both, so they add, ln(a_K) + ln(a_μ), rather than in quadrature [D: a choice].
        var kMu = options.KMuRelativeStd > 0
            ? options.KMuRelativeStd
            : (Math.Log(material.KFactor) + Math.Log(material.WallFrictionFactor)) / 1.645;
        return (gamma, kMu);
    }
}
