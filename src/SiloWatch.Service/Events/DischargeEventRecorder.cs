using System.Globalization;
using MQTTnet.Protocol;
using SiloWatch.Mechanics;
using SiloWatch.Monitoring;
using SiloWatch.Monitoring.Wall;
using SiloWatch.Plant;
using SiloWatch.Service.Alarms;
using SiloWatch.Service.Ingest;
using SiloWatch.Storage;

namespace SiloWatch.Service.Events;

/// <summary>The shared parts every silo's event recorder uses.</summary>
public sealed record DischargeEventContext(Journal Journal, OutboundQueue Outbound, string EventsTopic, string InstanceId, ILogger Logger);

/// <summary>
/// Turns each discharge of one silo into a full event record in the journal: the row when it starts
/// (in progress), and at its end the headline numbers, per ring the peak loads against the expected
/// ones and the pattern at the peak asymmetry, the alarms raised (from the alarm journal), the data
/// quality, and the capture of the silo's series from <see cref="EventRecordingOptions.PreStart"/>
/// before the onset to <see cref="EventRecordingOptions.PostEnd"/> after the end.
/// Called by the silo's worker once per evaluation, after the wall watch; one thread, no locks.
/// </summary>
public sealed class DischargeEventRecorder
{
    private readonly SiloRef _silo;
    private readonly SiloModel _model;
    private readonly EventRecordingOptions _options;
    private readonly WallWatchOptions _wallOptions;
    private readonly DischargeEventContext _context;
    private readonly EventCaptureBuilder _capture;
    private readonly double[] _frame;
    private readonly Gauge[] _gauges;
    private readonly Dictionary<string, RingSlot> _rings;
    private readonly int[] _temperatureChannel;
    private readonly int[] _temperatureSensor;
    private readonly long _preStartMs;
    private readonly long _postEndMs;

    // How far the inventory may wander by itself over a discharge before its figures are not those of a flow, share of capacity [a choice].
    private const double FigureToleranceOfCapacity = 0.01;

    private long? _openEventId;
    private bool _resumed;
    private Tally _tally = new(0);

    public DischargeEventRecorder(SiloRef silo, SiloModel model, EventRecordingOptions options, WallWatchOptions wallOptions, DischargeEventContext context)
    {
        ArgumentNullException.ThrowIfNull(silo);
        ArgumentNullException.ThrowIfNull(model);
        ArgumentNullException.ThrowIfNull(options);
        ArgumentNullException.ThrowIfNull(wallOptions);
        ArgumentNullException.ThrowIfNull(context);
        _silo = silo;
        _model = model;
        _options = options;
        _wallOptions = wallOptions;
        _context = context;
        _preStartMs = (long)options.PreStart.TotalMilliseconds;
        _postEndMs = (long)options.PostEnd.TotalMilliseconds;

        var channels = new List<CaptureChannel>
        {
            new("mass_kg", CaptureChannelKind.Mass, "kg"),
            new("rate_kg_s", CaptureChannelKind.Rate, "kg/s"),
        };
        var gauges = model.Gauges.Where(g => g.Ring.Length > 0).ToArray();
        _gauges = new Gauge[gauges.Length];
        for (var k = 0; k < gauges.Length; k++)
        {
            var g = gauges[k];
            _gauges[k] = new Gauge(g.SensorIndex, g.SensorId, g.Ring, g.AngleDeg, g.Kind == SensorKind.AxialStrain ? -1 : 1, channels.Count);
            channels.Add(new CaptureChannel("strain_micro:" + g.SensorId, CaptureChannelKind.Strain, "microstrain", g.SensorId, g.Ring, g.AngleDeg));
        }

        _temperatureChannel = new int[gauges.Length];
        _temperatureSensor = new int[gauges.Length];
        for (var k = 0; k < gauges.Length; k++)
        {
            _temperatureChannel[k] = -1;
            var pair = silo.Sensors[gauges[k].SensorIndex].Options.TemperatureSensor;
            if (pair.Length > 0 && silo.TryGetSensor(pair, out var t) && t.Options.Kind == SensorKind.Temperature)
            {
                _temperatureChannel[k] = channels.Count;
                _temperatureSensor[k] = t.Index;
                channels.Add(new CaptureChannel("temperature_c:" + gauges[k].SensorId, CaptureChannelKind.Temperature, "degC", gauges[k].SensorId, gauges[k].Ring, gauges[k].AngleDeg));
            }
        }

        _rings = new Dictionary<string, RingSlot>(StringComparer.Ordinal);
        var ringIds = gauges.Select(g => g.Ring).Distinct(StringComparer.Ordinal).ToArray();
        for (var r = 0; r < ringIds.Length; r++)
        {
            var members = gauges.Where(g => g.Ring == ringIds[r]).ToArray();
            _rings[ringIds[r]] = new RingSlot(ringIds[r], channels.Count, [.. Enumerable.Range(0, gauges.Length).Where(k => gauges[k].Ring == ringIds[r])])
            {
                Kind = members[0].Kind,
                HeightM = members.Average(g => g.HeightAboveTransitionM),
            };
            channels.Add(new CaptureChannel("a1_ratio:" + ringIds[r], CaptureChannelKind.RingA1Ratio, "ratio", Ring: ringIds[r]));
            channels.Add(new CaptureChannel("a1_direction_deg:" + ringIds[r], CaptureChannelKind.RingDirection, "deg", Ring: ringIds[r]));
            channels.Add(new CaptureChannel("mean_force_kn_m:" + ringIds[r], CaptureChannelKind.RingMeanForce, "kN/m", Ring: ringIds[r]));
        }

        _frame = new double[channels.Count];
        _capture = new EventCaptureBuilder(silo.SiteId, silo.SiloId, channels, Math.Max(1, (long)options.CaptureInterval.TotalMilliseconds), _preStartMs, options.MaxCaptureFrames);
    }

    /// <summary>The id of the event in progress, if any.</summary>
    public long? OpenEventId => _openEventId;

    /// <summary>Frames held in memory now (bounded: pre-start buffer or the event's capture up to its cap).</summary>
    public int HeldFrames => _capture.HeldFrames;

    /// <summary>Picks up an event left in progress by a restart: it goes on, noted as having a gap in its capture.</summary>
    public void Restore()
    {
        var open = _context.Journal.FindOpenEvent(_silo.SiteId, _silo.SiloId);
        _openEventId = open?.Id;
        _resumed = open is not null;
        if (open is not null)
        {
            _tally = new Tally(_silo.Sensors.Count) { StartedMs = open.StartedMs, MassAtStartKg = open.MassAtStartKg };
            _capture.Start(open.StartedMs - _preStartMs);
        }
    }

    /// <summary>One evaluation of the silo (worker only): capture a frame, follow the discharge, close its record at the end.</summary>
    public void OnEvaluated(SiloMonitor monitor, WallAssessment a, InventoryEstimate estimate, long nowMs)
    {
        ArgumentNullException.ThrowIfNull(monitor);
        ArgumentNullException.ThrowIfNull(a);
        ArgumentNullException.ThrowIfNull(estimate);
        FillFrame(monitor, a, estimate);
        _capture.Offer(nowMs, _frame);

        if (a.StateChange is { To: DischargeState.Discharging } change && change.From != DischargeState.Settling && _openEventId is null)
        {
            Begin(a, change);
        }

        if (a.State == DischargeState.Discharging && _capture.Capturing)
        {
            Follow(monitor, a, estimate, nowMs);
        }

        if (a.FinishedDischarge is { } d)
        {
            Finish(d, nowMs);
        }
    }

    private void FillFrame(SiloMonitor monitor, WallAssessment a, InventoryEstimate estimate)
    {
        var good = estimate.Quality != Quality.Bad;
        _frame[0] = good ? estimate.MassKg : double.NaN;
        _frame[1] = good ? estimate.RateKgPerS : double.NaN;
        for (var k = 0; k < _gauges.Length; k++)
        {
            var g = _gauges[k];
            _frame[g.Channel] = monitor.LastValue(g.SensorIndex);
            if (_temperatureChannel[k] >= 0)
            {
                _frame[_temperatureChannel[k]] = monitor.LastValue(_temperatureSensor[k]);
            }
        }

        foreach (var r in a.Rings)
        {
            if (_rings.TryGetValue(r.Ring, out var slot))
            {
                _frame[slot.Channel] = r.A1Ratio;
                _frame[slot.Channel + 1] = r.AsymmetryDirectionDeg;
                _frame[slot.Channel + 2] = r.ForceKnPerM.Count > 0 ? r.ForceKnPerM[0].Cos : double.NaN;
            }
        }
    }

    private void Begin(WallAssessment a, DischargeStateChange change)
    {
        var onset = a.DischargeOnsetMs ?? change.OnsetMs;
        _tally = new Tally(_silo.Sensors.Count) { StartedMs = onset, MassAtStartKg = a.MassKg };
        _resumed = false;
        _capture.Start(onset - _preStartMs);
        foreach (var ring in _rings.Values)
        {
            ring.Reset();
        }

        // The gauges' own baseline, over the wall watch's window before the onset, for the pattern's gauge points.
        var end = onset - (long)_wallOptions.BaselineLead.TotalMilliseconds;
        var start = end - (long)_wallOptions.BaselineWindow.TotalMilliseconds;
        var frames = _capture.EventFrames;
        var window = frames.Where(f => f.TimestampMs >= start && f.TimestampMs <= end).ToList();
        if (window.Count == 0)
        {
            window = [.. frames.Where(f => f.TimestampMs <= onset).Take(3)];
        }

        foreach (var g in _gauges)
        {
            var values = window.Select(f => (double)f.Values[g.Channel]).Where(double.IsFinite).ToArray();
            g.BaselineMicro = values.Length > 0 ? values.Average() : double.NaN;
        }

        try
        {
            _openEventId = _context.Journal.AppendEvent(new DischargeEventRecord
            {
                SiteId = _silo.SiteId,
                SiloId = _silo.SiloId,
                StartedMs = onset,
                MassAtStartKg = Finite(a.MassKg),
            });
        }
        catch (Exception ex) when (ex is Microsoft.Data.Sqlite.SqliteException or ObjectDisposedException or InvalidOperationException)
        {
            _context.Logger.LogError(ex, "Journaling the start of a discharge of {Silo} failed", _silo.Key);
        }
    }

    private void Follow(SiloMonitor monitor, WallAssessment a, InventoryEstimate estimate, long nowMs)
    {
        var t = _tally;
        t.Estimates[(int)estimate.Quality]++;
        for (var i = 0; i < _silo.Sensors.Count; i++)
        {
            var flags = monitor.SensorFlags(i, nowMs);
            var q = flags.Severity();
            t.Readings[(int)q]++;
            if (q != Quality.Good)
            {
                var s = t.Sensors[i];
                if (q == Quality.Bad)
                {
                    s.Bad++;
                }
                else
                {
                    s.Uncertain++;
                }

                s.Reason ??= flags.Describe();
            }
        }

        var massKg = a.MassKg;
        var state = double.IsFinite(massKg) ? _model.StateAtMass(massKg, FlowMode.Discharging) : (FillState?)null;
        foreach (var r in a.Rings)
        {
            if (!_rings.TryGetValue(r.Ring, out var slot))
            {
                continue;
            }

            var peak = PeakOf(r.ForceKnPerM);
            if (slot.MeanForceAtStart is null && r.ForceKnPerM.Count > 0 && double.IsFinite(r.ForceKnPerM[0].Cos))
            {
                slot.MeanForceAtStart = r.ForceKnPerM[0].Cos;
            }

            if (double.IsFinite(peak) && !(peak <= slot.PeakForce))
            {
                slot.PeakForce = peak;
                slot.PeakForceMs = nowMs;
                slot.ExpectedAtPeak = state is { } s ? ExpectedForce(r.Kind, _model.WallAt(s, r.HeightM)) : double.NaN;
            }

            if (double.IsFinite(r.A1Ratio) && !(r.A1Ratio <= slot.MaxA1))
            {
                slot.MaxA1 = r.A1Ratio;
                slot.Pattern = new RingPattern(nowMs, r.A1Ratio, r.AsymmetryDirectionDeg,
                    [.. r.ChangeMicro.Select(h => new PatternHarmonic(h.Order, h.Cos, h.Sin, h.Amplitude, h.DirectionDeg))],
                    [.. slot.Gauges.Select(k => GaugeChangeNow(monitor, k, nowMs))]);
            }
        }
    }

    private GaugeChange GaugeChangeNow(SiloMonitor monitor, int k, long nowMs)
    {
        var g = _gauges[k];
        var usable = monitor.SensorFlags(g.SensorIndex, nowMs).Severity() == Quality.Good;
        var value = monitor.LastValue(g.SensorIndex);
        double? change = usable && double.IsFinite(value) && double.IsFinite(g.BaselineMicro) ? g.Sign * (value - g.BaselineMicro) : null;
        return new GaugeChange(g.SensorId, g.AngleDeg, change);
    }

    private void Finish(DischargeSummary d, long nowMs)
    {
        var t = _tally;
        var notes = new List<string>();
        if (_resumed)
        {
            notes.Add("the service restarted during this discharge: the capture and the quality counts cover only the part after the restart");
        }

        var captureFrom = d.OnsetMs - _preStartMs;
        var captureTo = Math.Min(nowMs, d.EndMs + _postEndMs);
        if (d.EndMs + _postEndMs > nowMs)
        {
            notes.Add($"the capture ends when the settling ended, {(nowMs - d.EndMs) / 1000.0:0} s after the flow stopped");
        }

        var capture = _capture.Capturing ? _capture.Finish(captureFrom, captureTo) : null;
        if (capture is { Decimations: > 0 })
        {
            notes.Add($"the capture was halved {capture.Decimations} time(s) to stay within {_options.MaxCaptureFrames} frames: frames {capture.IntervalMs / 1000.0:0.#} s apart (means)");
        }

        var alarms = RaisedAlarms(d.OnsetMs, nowMs);
        var rings = d.Rings.Select(RingDetails).ToArray();
        var details = new DischargeEventDetails(
            DischargeEventDetails.CurrentFormat,
            _context.InstanceId,
            _silo.Options.Name,
            _model.Material.Name,
            Finite(d.MassAtEndKg),
            Math.Max(0, (d.EndMs - d.OnsetMs) / 1000.0),
            capture is { Frames.Count: > 0 } ? capture.Frames[0].TimestampMs : captureFrom,
            capture is { Frames.Count: > 0 } ? capture.Frames[^1].TimestampMs : captureTo,
            new DischargeFactors(_model.Factors.DischargeHorizontalCh, _model.Factors.DischargeFrictionCw,
                "EN 1991-4 §5.2.2 discharge factors C_h, C_w for slender silos, from memory [M?]; configurable load factors of the mechanics library"),
            rings,
            alarms,
            QualityOf(t),
            Profile(Finite(d.MassAtStartKg)),
            notes);

        var peak = d.Rings.Where(r => double.IsFinite(r.MaxA1Ratio)).OrderByDescending(r => r.MaxA1Ratio).FirstOrDefault();
        var peakRate = capture is null ? double.NaN : PeakRate(capture, d.OnsetMs, d.EndMs, (long)_options.PeakRateWindow.TotalMilliseconds);
        // Only what a flow out of the silo can do is reported; otherwise the record says the inventory did not follow it.
        var figures = DischargeFigures.Check(d.MassAtStartKg, d.MassAtEndKg, Math.Max(0, (d.EndMs - d.OnsetMs) / 1000.0), peakRate,
            _options.PeakRateWindow.TotalSeconds, FigureToleranceOfCapacity * _model.CapacityKg);
        notes.AddRange(figures.Notes);

        var record = new DischargeEventRecord
        {
            Id = _openEventId ?? 0,
            SiteId = d.SiteId,
            SiloId = d.SiloId,
            StartedMs = d.OnsetMs,
            EndedMs = d.EndMs,
            MassAtStartKg = Finite(d.MassAtStartKg),
            MassOutKg = figures.MassOutKg,
            MeanRateKgPerS = figures.MeanRateKgPerS,
            PeakRateKgPerS = figures.PeakRateKgPerS,
            MaxAsymmetryRatio = peak is null ? 0 : peak.MaxA1Ratio,
            AsymmetryDirectionDeg = peak is null ? 0 : Finite(peak.DirectionAtMaxDeg),
            MaxA2Ratio = MaxOf(d.Rings.Select(r => r.MaxA2Ratio)),
            MaxPeakOverMean = MaxOf(d.Rings.Select(r => r.MaxPeakOverMean)),
            MaxMeasuredOverExpected = MaxOf(d.Rings.Select(r => r.MaxMeasuredOverExpected)),
            HighestPriority = alarms.Count > 0 ? alarms.Min(x => x.Priority) : null,
            AlarmsRaised = alarms.Count,
            DetailsJson = details.ToJson(),
        };

        try
        {
            _openEventId = _context.Journal.CompleteEvent(record, capture);
        }
        catch (Exception ex) when (ex is Microsoft.Data.Sqlite.SqliteException or ObjectDisposedException or InvalidOperationException)
        {
            _context.Logger.LogError(ex, "Journaling the discharge event of {Silo} failed", _silo.Key);
        }

        _context.Outbound.Enqueue(new OutboundMessage(_context.EventsTopic, AlarmPayloads.Discharge(d, figures, _openEventId ?? 0, _context.InstanceId),
            Retain: false, MqttQualityOfServiceLevel.AtLeastOnce));
        if (figures.Known)
        {
            _context.Logger.LogInformation("Discharge event {Id} of {Silo}: {MassOut:0} kg out, peak A1/A0 {A1:0.###} toward {Direction:0} deg, {Alarms} alarm(s) raised",
                _openEventId, _silo.Key, record.MassOutKg, record.MaxAsymmetryRatio, record.AsymmetryDirectionDeg, record.AlarmsRaised);
        }
        else
        {
            _context.Logger.LogWarning("Discharge event {Id} of {Silo}: mass out not known ({Why}), peak A1/A0 {A1:0.###} toward {Direction:0} deg, {Alarms} alarm(s) raised",
                _openEventId, _silo.Key, figures.Notes[0], record.MaxAsymmetryRatio, record.AsymmetryDirectionDeg, record.AlarmsRaised);
        }
        _openEventId = null;
        _resumed = false;
    }

    private RingEventDetails RingDetails(RingPeak p)
    {
        _rings.TryGetValue(p.Ring, out var slot);
        var gauges = slot?.Gauges.Length ?? 0;
        return new RingEventDetails(
            p.Ring,
            slot?.Kind == SensorKind.HoopStrain ? "hoop" : "axial",
            slot is null ? double.NaN : slot.HeightM,
            gauges,
            Known(slot?.PeakForce),
            slot is { PeakForceMs: > long.MinValue } ? slot.PeakForceMs : null,
            Known(slot?.ExpectedAtPeak),
            Known(slot?.MeanForceAtStart),
            Known(p.MaxMeasuredOverExpected),
            Known(p.MaxA1Ratio),
            Known(p.DirectionAtMaxDeg),
            Known(p.MaxA2Ratio),
            Known(p.MaxPeakOverMean),
            slot?.Pattern);
    }

    private List<EventAlarm> RaisedAlarms(long fromMs, long toMs)
    {
        IReadOnlyList<AlarmTransitionRecord> history;
        try
        {
            history = _context.Journal.QueryAlarmHistory(_silo.SiteId, _silo.SiloId, fromMs, toMs + 1);
        }
        catch (Exception ex) when (ex is Microsoft.Data.Sqlite.SqliteException or ObjectDisposedException or InvalidOperationException)
        {
            _context.Logger.LogError(ex, "Reading the alarm journal of {Silo} for its discharge event failed", _silo.Key);
            return [];
        }

        var raised = new List<EventAlarm>();
        foreach (var group in history.GroupBy(h => h.AlarmId, StringComparer.Ordinal))
        {
            var first = group.FirstOrDefault(h => h.ToState == "unacknowledged");
            if (first is null)
            {
                continue;
            }

            var last = group.Last();
            raised.Add(new EventAlarm(group.Key, first.Priority, first.TimestampMs, Known(first.Value), Known(first.Limit), last.ToState, first.Message));
        }

        return [.. raised.OrderBy(x => x.RaisedMs)];
    }

    private EventDataQuality QualityOf(Tally t)
    {
        var readings = t.Readings.Sum();
        var estimates = t.Estimates.Sum();
        double Share(long n, long of) => of > 0 ? (double)n / of : 0;
        var faults = new List<SensorFault>();
        for (var i = 0; i < t.Sensors.Length; i++)
        {
            var s = t.Sensors[i];
            if (s.Bad + s.Uncertain > 0)
            {
                faults.Add(new SensorFault(_silo.Sensors[i].Id, s.Uncertain, s.Bad, s.Reason ?? ""));
            }
        }

        return new EventDataQuality(readings,
            Share(t.Readings[(int)Quality.Good], readings), Share(t.Readings[(int)Quality.Uncertain], readings), Share(t.Readings[(int)Quality.Bad], readings),
            Share(t.Estimates[(int)Quality.Good], estimates), Share(t.Estimates[(int)Quality.Uncertain], estimates), Share(t.Estimates[(int)Quality.Bad], estimates),
            faults);
    }

    private List<ExpectedWallPoint> Profile(double massKg)
    {
        var points = new List<ExpectedWallPoint>();
        if (!(massKg > 0))
        {
            return points;
        }

        var filling = _model.StateAtMass(massKg, FlowMode.Filling);
        var discharge = _model.StateAtMass(massKg, FlowMode.Discharging);
        var top = Math.Min(_model.Geometry.WallHeightM, Math.Max(0, filling.ContactAboveTransitionM));
        var step = _options.ProfileStepM;
        for (var h = 0.0; h <= top + 1e-9; h += step)
        {
            var f = _model.WallAt(filling, h);
            var e = _model.WallAt(discharge, h);
            points.Add(new ExpectedWallPoint(Math.Round(h, 3), f.DepthM, f.AxialForceKnPerM, e.AxialForceKnPerM, Known(f.HoopForceKnPerM), Known(e.HoopForceKnPerM)));
        }

        return points;
    }

    /// <summary>Highest mean outflow over any window of <paramref name="windowMs"/> inside [from, to], from the captured mass, kg/s; NaN when no window fits.</summary>
    public static double PeakRate(EventCapture capture, long fromMs, long toMs, long windowMs)
    {
        ArgumentNullException.ThrowIfNull(capture);
        var m = capture.IndexOf("mass_kg");
        var frames = capture.Frames.Where(f => f.TimestampMs >= fromMs && f.TimestampMs <= toMs && float.IsFinite(f.Values[m])).ToArray();
        var best = double.NaN;
        var j = 0;
        for (var i = 0; i < frames.Length; i++)
        {
            while (j < frames.Length && frames[j].TimestampMs - frames[i].TimestampMs < windowMs)
            {
                j++;
            }

            if (j >= frames.Length)
            {
                break;
            }

            var seconds = (frames[j].TimestampMs - frames[i].TimestampMs) / 1000.0;
            var rate = (frames[i].Values[m] - frames[j].Values[m]) / seconds;
            best = double.IsNaN(best) ? rate : Math.Max(best, rate);
        }

        return best;
    }

    private static double ExpectedForce(SensorKind kind, WallPoint wall) => kind == SensorKind.HoopStrain ? wall.HoopForceKnPerM : wall.AxialForceKnPerM;

    // Highest value of the fitted ring pattern, load sense (every 2 degrees).
    private static double PeakOf(IReadOnlyList<Harmonic> harmonics)
    {
        if (harmonics.Count == 0 || !double.IsFinite(harmonics[0].Cos))
        {
            return double.NaN;
        }

        var max = double.NegativeInfinity;
        for (var deg = 0; deg < 360; deg += 2)
        {
            var t = deg * Math.PI / 180.0;
            var v = harmonics[0].Cos;
            for (var n = 1; n < harmonics.Count; n++)
            {
                v += (harmonics[n].Cos * Math.Cos(n * t)) + (harmonics[n].Sin * Math.Sin(n * t));
            }

            max = Math.Max(max, v);
        }

        return max;
    }

    private static double Finite(double x) => double.IsFinite(x) ? x : 0;

    private static double? Known(double? x) => x is { } v && double.IsFinite(v) ? v : null;

    private static double MaxOf(IEnumerable<double> values)
    {
        var finite = values.Where(double.IsFinite).ToArray();
        return finite.Length > 0 ? finite.Max() : double.NaN;
    }

    private sealed class Gauge(int sensorIndex, string sensorId, string ring, double angleDeg, double sign, int channel)
    {
        public int SensorIndex { get; } = sensorIndex;

        public string SensorId { get; } = sensorId;

        public string Ring { get; } = ring;

        public double AngleDeg { get; } = angleDeg;

        /// <summary>−1 for axial gauges (compression is the load), +1 for hoop.</summary>
        public double Sign { get; } = sign;

        public int Channel { get; } = channel;

        public double BaselineMicro { get; set; } = double.NaN;
    }

    private sealed class RingSlot(string id, int channel, int[] gauges)
    {
        public string Id { get; } = id;

        public int Channel { get; } = channel;

        public int[] Gauges { get; } = gauges;

        public SensorKind Kind { get; set; } = SensorKind.AxialStrain;

        public double HeightM { get; set; } = double.NaN;

        public double PeakForce { get; set; } = double.NaN;

        public long PeakForceMs { get; set; } = long.MinValue;

        public double ExpectedAtPeak { get; set; } = double.NaN;

        public double? MeanForceAtStart { get; set; }

        public double MaxA1 { get; set; } = double.NaN;

        public RingPattern? Pattern { get; set; }

        public void Reset()
        {
            PeakForce = double.NaN;
            PeakForceMs = long.MinValue;
            ExpectedAtPeak = double.NaN;
            MeanForceAtStart = null;
            MaxA1 = double.NaN;
            Pattern = null;
        }

        public override string ToString() => string.Create(CultureInfo.InvariantCulture, $"{Id} peak {PeakForce} kN/m, A1/A0 {MaxA1}");
    }

    private sealed class SensorTally
    {
        public long Uncertain;
        public long Bad;
        public string? Reason;
    }

    private sealed class Tally(int sensors)
    {
        public long StartedMs { get; init; }

        public double MassAtStartKg { get; init; }

        public long[] Readings { get; } = new long[3];

        public long[] Estimates { get; } = new long[3];

        public SensorTally[] Sensors { get; } = [.. Enumerable.Range(0, sensors).Select(_ => new SensorTally())];
    }
}
