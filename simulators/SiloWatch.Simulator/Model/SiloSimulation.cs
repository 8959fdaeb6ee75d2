using SiloWatch.Plant;
using SiloWatch.Simulator.Messages;
using SiloWatch.Simulator.Physics;
using SiloWatch.Simulator.Scenarios;

namespace SiloWatch.Simulator.Model;

/// <summary>The weather at one instant, shared by the silos of a site.</summary>
public readonly record struct AmbientState(double AirC, double SunAzimuthDeg, double SunIntensity, double WindMs, double WindFromDeg);

/// <summary>
/// One simulated silo: its contents, flows, loads and every sensor on it. Advanced one sample
/// period at a time; yields the samples that fall due.
/// </summary>
public sealed class SiloSimulation
{
    private const double LegClearanceM = 2.0;
    private readonly Scenario _scenario;
    private readonly Noise _noise;
    private readonly SensorState[] _sensors;
    private readonly Dictionary<string, SensorState> _byId;
    private readonly Dictionary<int, double> _shellC = [];
    private readonly SensorOptions[][] _rings;
    private Delivery? _delivery;
    private Discharge? _discharge;
    private FlowChannel? _channel;
    private double _dischargeFactor;
    private double _apexX;
    private double _apexY;
    private double _rateJitter;
    private bool _shellInitialised;
    private double _shellMeanC;

    public SiloSimulation(SiteOptions site, SiloOptions silo, Materials.MaterialProperties material, Scenario scenario, SiloSetup? setup, int seed)
    {
        Site = site;
        Options = silo;
        _scenario = scenario;
        _noise = new Noise(seed);
        Shape = new SiloShape(silo.Geometry, material.AngleOfReposeDeg);
        var hopperCategory = silo.Geometry.Hopper.WallCategory ?? silo.Geometry.WallCategory;
        Solid = new SolidParameters(
            setup?.UnitWeightKnM3 ?? material.UnitWeightMeanKnM3,
            material.KMean,
            material.WallFriction(silo.Geometry.WallCategory),
            material.WallFriction(hopperCategory),
            // Interface friction of solid on solid at the channel edge: tan of the angle of repose as an estimate [M].
            Math.Tan(material.AngleOfReposeDeg * Math.PI / 180));
        MassKg = (setup?.InitialFillPercent ?? 0) / 100 * Shape.CapacityM3 * Solid.DensityKgM3;
        if (setup is not null && setup.HeapOffsetRatio != 0)
        {
            var a = setup.HeapOffsetAzimuthDeg * Math.PI / 180;
            _apexX = setup.HeapOffsetRatio * Shape.HalfSpanM * Math.Cos(a);
            _apexY = setup.HeapOffsetRatio * Shape.HalfSpanM * Math.Sin(a);
        }

        _sensors = [.. silo.Sensors.Select(s => new SensorState(s, AngleOf(s, silo), _noise))];
        _byId = _sensors.ToDictionary(s => s.Options.Id, StringComparer.Ordinal);
        _rings = [.. silo.Sensors.Where(s => s.Kind is SensorKind.AxialStrain or SensorKind.HoopStrain && s.Ring.Length > 0)
            .GroupBy(s => s.Ring, StringComparer.Ordinal).Select(g => g.ToArray())];
        Loads = ComputeLoads();
    }

    public SiteOptions Site { get; }

    public SiloOptions Options { get; }

    public SiloShape Shape { get; }

    public SolidParameters Solid { get; }

    public double MassKg { get; private set; }

    public SiloLoadState Loads { get; private set; }

    public long Seq { get; set; }

    public FlowState Flow => _discharge is not null ? FlowState.Discharging : _delivery is { InGap: false } ? FlowState.Filling : FlowState.Idle;

    public double FlowRateKgPerS { get; private set; }

    public double CapacityKg => Shape.CapacityM3 * Solid.DensityKgM3;

    public double? ChannelAzimuthDeg => _discharge is not null ? _channel?.AzimuthDeg : null;

    /// <summary>Offset of the contents' centre of mass: the heap's share of the volume times half its apex offset [simple model].</summary>
    public (double OffsetM, double AzimuthDeg) Eccentricity
    {
        get
        {
            var volume = MassKg / Solid.DensityKgM3;
            if (volume <= 0 || Loads.Surface.InHopper)
            {
                return (0, 0);
            }

            var heapShare = Shape.AreaM2 * Loads.Surface.HeapHeightM / 3 / volume;
            var x = heapShare * 0.5 * _apexX;
            var y = heapShare * 0.5 * _apexY;
            var az = Math.Atan2(y, x) * 180 / Math.PI;
            return (Math.Sqrt((x * x) + (y * y)), az < 0 ? az + 360 : az);
        }
    }

    /// <summary>
    /// The truth of the wall-load asymmetry: for every gauge ring the contents cover by at least 0.5 m, the first
    /// harmonic of the mechanical load (axial compression, hoop tension) at the gauges' angles over its mean,
    /// A1/A0 [D, DOMAIN.md §4: a_1 = (2/N)Σ ε_k cos θ_k, b_1 likewise]; the largest over the rings. Still air, no
    /// heat, no noise: only the contents act. 0 without a flow channel, since the rest of the model is axisymmetric.
    /// </summary>
    public double WallA1Ratio()
    {
        if (Loads.Channel is null || _channel is null)
        {
            return 0;
        }

        var still = new AmbientState(0, double.NaN, 0, 0, 0);
        var best = 0.0;
        foreach (var ring in _rings)
        {
            if (Loads.Surface.ContactHeightM - ring[0].HeightM < 0.5)
            {
                continue;
            }

            double sum = 0, a = 0, b = 0;
            foreach (var g in ring)
            {
                var (axial, hoop) = WallStrainMicro(g.HeightM, g.AngleDeg, still);
                var load = g.Kind == SensorKind.AxialStrain ? -axial : hoop;
                var t = g.AngleDeg * Math.PI / 180;
                sum += load;
                a += load * Math.Cos(t);
                b += load * Math.Sin(t);
            }

            var n = ring.Length;
            var mean = sum / n;
            if (n >= 3 && Math.Abs(mean) > 1e-9)
            {
                best = Math.Max(best, 2.0 / n * Math.Sqrt((a * a) + (b * b)) / Math.Abs(mean));
            }
        }

        return best;
    }

    public string ActiveFaults(TimeSpan elapsed) =>
        string.Join(';', _sensors.Where(s => s.Fault is not null && s.Fault.IsActive(elapsed)).Select(s => $"{s.Options.Id}:{s.Fault!.Kind}"));

    public void StartDelivery(ScenarioEvent e, TimeSpan now) =>
        _delivery = new Delivery(e.MassKg, Math.Max(1, e.RateKgPerS), Math.Max(1, e.Batches), e.BatchGap, e.FillOffsetRatio, e.FillAzimuthDeg, now);

    public void StartDischarge(ScenarioEvent e)
    {
        _discharge = new Discharge(e.MassKg > 0 ? e.MassKg : double.PositiveInfinity, Math.Max(1, e.RateKgPerS));
        _channel = e.ChannelAzimuthDeg is { } az ? new FlowChannel(az, e.ChannelRadiusRatio, e.ChannelEccentricityRatio) : null;
    }

    public void Stop()
    {
        _delivery = null;
        _discharge = null;
    }

    public void InjectFault(ScenarioEvent e, TimeSpan now)
    {
        if (!_byId.TryGetValue(e.Sensor, out var sensor))
        {
            throw new InvalidDataException($"scenario: silo '{Options.Id}' has no sensor '{e.Sensor}'");
        }

        sensor.Fault = new ActiveFault(e.Fault, now, e.Duration is { } d ? now + d : TimeSpan.MaxValue, e.SendZero, e.DriftPerHour, e.SpikeSize, e.SpikesPerMinute, e.NoiseFactor);
    }

    /// <summary>Advances by dt and returns the samples due at this instant (tick counts sample periods from the start).</summary>
    public List<SampleValue> Step(TimeSpan elapsed, double dtS, AmbientState ambient, bool firstTick)
    {
        StepFlows(elapsed, dtS);
        Loads = ComputeLoads();
        UpdateShell(ambient, dtS);
        var samples = new List<SampleValue>(_sensors.Length);
        var elapsedMs = (long)elapsed.TotalMilliseconds;
        var periodMs = (long)_scenario.SamplePeriod.TotalMilliseconds;
        var supportLoads = SupportLoadsKn(ambient);
        foreach (var s in _sensors)
        {
            var truth = s.Options.Kind switch
            {
                SensorKind.LoadCell => LoadCellValue(s, supportLoads, ambient, elapsed),
                SensorKind.AxialStrain or SensorKind.HoopStrain => GaugeValue(s, ambient, elapsed),
                // The control system's outlet signal: 1 while the discharge runs, 0 otherwise (no noise on a contact).
                SensorKind.Outlet => _discharge is not null ? 1.0 : 0.0,
                _ => TemperatureAt(s.AngleDeg, ambient) + (_scenario.Noise.TemperatureK * s.NoiseFactorAt(elapsed) * _noise.Gaussian()),
            };
            var sensorPeriodMs = Math.Max(periodMs, (long)s.Options.ExpectedPeriod.TotalMilliseconds);
            var due = firstTick || elapsedMs % sensorPeriodMs < periodMs;
            var value = s.Apply(truth, elapsed, dtS);
            if (due && value is { } v)
            {
                samples.Add(new SampleValue(s.Options.Id, Round(v, s.Options.Kind), s.Options.Unit));
            }
        }

        return samples;
    }

    private static double Round(double v, SensorKind kind) => kind == SensorKind.Temperature ? Math.Round(v, 2) : Math.Round(v, 6);

    private void StepFlows(TimeSpan elapsed, double dtS)
    {
        _rateJitter += (-_rateJitter * dtS / 30) + (_scenario.Noise.FlowRateJitter * Math.Sqrt(2 * dtS / 30) * _noise.Gaussian());
        var jitter = Math.Max(0.5, 1 + _rateJitter);
        var net = 0.0;
        if (_delivery is { } d)
        {
            var inKg = d.Step(elapsed, dtS, jitter, CapacityKg - MassKg);
            if (inKg > 0)
            {
                MoveApexToward(d.OffsetRatio * Shape.HalfSpanM, d.AzimuthDeg, inKg);
            }

            net += inKg;
            if (d.Done)
            {
                _delivery = null;
            }
        }

        if (_discharge is { } q)
        {
            var outKg = Math.Min(MassKg + net, q.RateKgPerS * jitter * dtS);
            outKg = Math.Min(outKg, q.RemainingKg);
            q.RemainingKg -= outKg;
            net -= outKg;
            if (_channel is { } c && outKg > 0)
            {
                // The surface slopes down into the channel: the heap's apex moves to the far side.
                MoveApexToward(c.EccentricityRatio * Shape.HalfSpanM, c.AzimuthDeg + 180, outKg);
            }

            if (q.RemainingKg <= 0 || MassKg + net <= 0.5)
            {
                _discharge = null;
            }
        }

        _dischargeFactor = _discharge is not null
            ? Math.Min(1, _dischargeFactor + (dtS / _scenario.Discharge.SwitchSeconds))
            : Math.Max(0, _dischargeFactor - (dtS / _scenario.Discharge.SwitchSeconds));
        MassKg = Math.Clamp(MassKg + net, 0, CapacityKg);
        FlowRateKgPerS = net / dtS;
    }

    private void MoveApexToward(double offsetM, double azimuthDeg, double massKg)
    {
        // The apex follows the stream after about half a full heap's volume has passed.
        var heapKg = Shape.AreaM2 * Shape.HeapPeakM / 3 * Solid.DensityKgM3;
        var w = Math.Min(1, massKg / (0.5 * heapKg));
        var a = azimuthDeg * Math.PI / 180;
        _apexX += w * ((offsetM * Math.Cos(a)) - _apexX);
        _apexY += w * ((offsetM * Math.Sin(a)) - _apexY);
    }

    private SiloLoadState ComputeLoads()
    {
        var channel = _discharge is not null || _dischargeFactor > 0 ? _channel : null;
        var key = (MassKg, _dischargeFactor, channel);
        // Idle silos keep their state: integrate again only when something that loads the wall changed.
        if (_loadsKey is { } last && last == key)
        {
            return Loads;
        }

        _loadsKey = key;
        return SiloLoads.Compute(Shape, Solid, MassKg / Solid.DensityKgM3, _dischargeFactor, _scenario.Discharge.Ch, _scenario.Discharge.Cw, channel);
    }

    private (double MassKg, double DischargeFactor, FlowChannel? Channel)? _loadsKey;

    private void UpdateShell(AmbientState ambient, double dtS)
    {
        var a = _shellInitialised ? 1 - Math.Exp(-dtS / _scenario.Weather.ShellTimeConstantS) : 1;
        foreach (var s in _sensors)
        {
            var key = (int)Math.Round(s.AngleDeg);
            var target = ambient.AirC + SunPath.ShellWarmingK(s.AngleDeg, ambient.SunAzimuthDeg, ambient.SunIntensity, _scenario.Weather);
            _shellC[key] = _shellC.TryGetValue(key, out var t) ? t + (a * (target - t)) : target;
        }

        // The circumference's mean temperature, lagged alike (a lag commutes with the mean): the mean of
        // max(0, cos(θ − θ_sun)) round the shell is 1/π [D], so the mean warming is the sun side's peak over π.
        var meanTarget = ambient.AirC + (SunPath.ShellWarmingK(ambient.SunAzimuthDeg, ambient.SunAzimuthDeg, ambient.SunIntensity, _scenario.Weather) / Math.PI);
        _shellMeanC = _shellInitialised ? _shellMeanC + (a * (meanTarget - _shellMeanC)) : meanTarget;
        _shellInitialised = true;
    }

    private double ShellMeanC(AmbientState ambient) => _shellInitialised ? _shellMeanC : ambient.AirC;

    private double TemperatureAt(double angleDeg, AmbientState ambient) =>
        _shellC.TryGetValue((int)Math.Round(angleDeg), out var t) ? t : ambient.AirC;

    /// <summary>Vertical load on each support, kN: contents (with their offset), structure, wind moment.</summary>
    public double[] SupportLoadsKn(AmbientState ambient)
    {
        var w = Options.Weighing;
        var n = Math.Max(1, w.SupportCount);
        var structureKn = w.StructureMassKg * SolidParameters.StandardGravity / 1000;
        var (e, eAz) = Eccentricity;
        if (w.Arrangement == WeighingArrangement.FloorOnly)
        {
            // The floor or hopper stands on its own cells; the walls (and the wind on them) go to their own foundation.
            var baseKn = Loads.BaseLoadKn;
            return Supports.Reactions(n, Math.Max(0.1, w.SupportRadiusM), w.FirstSupportAngleDeg, baseKn + structureKn, baseKn * e, eAz, 0, 0);
        }

        var contentsKn = MassKg * SolidParameters.StandardGravity / 1000;
        var circular = Shape.Section == SectionShape.Circular;
        var q = WindLoad.DynamicPressureKPa(ambient.WindMs);
        var forceKn = q * WindLoad.DragCoefficient(circular) * (2 * Shape.HalfSpanM) * Shape.WallHeightM;
        var lever = LegClearanceM + Shape.HopperHeightM + (Shape.WallHeightM / 2);
        return Supports.Reactions(n, Math.Max(0.1, w.SupportRadiusM), w.FirstSupportAngleDeg, contentsKn + structureKn, contentsKn * e, eAz,
            forceKn * lever, ambient.WindFromDeg + 180);
    }

    private double LoadCellValue(SensorState s, double[] supportLoads, AmbientState ambient, TimeSpan elapsed)
    {
        var o = s.Options;
        double force;
        if (Options.Weighing.Arrangement == WeighingArrangement.FloorOnly)
        {
            // Cells under the floor or hopper: numbered like supports when they are, else shared evenly.
            force = o.Support >= 1 && o.Support <= supportLoads.Length ? supportLoads[o.Support - 1] : supportLoads.Sum() / supportLoads.Length;
        }
        else
        {
            force = supportLoads[Math.Clamp(o.Support - 1, 0, supportLoads.Length - 1)];
        }

        var temperature = o.TemperatureSensor.Length > 0 && _byId.TryGetValue(o.TemperatureSensor, out var t) ? TemperatureAt(t.AngleDeg, ambient) : ambient.AirC;
        s.ZeroDriftMvPerV += _scenario.Noise.LoadCellZeroDriftMvPerVPerSqrtDay * Math.Sqrt(_scenario.SamplePeriod.TotalDays) * _noise.Gaussian();
        var v = Bridges.LoadCellMvPerV(o, force, temperature, s.ZeroDriftMvPerV) + (_scenario.Noise.LoadCellMvPerV * s.NoiseFactorAt(elapsed) * _noise.Gaussian());
        return v;
    }

    /// <summary>Mechanical strains of the wall at a gauge's height and angle (no temperature effects), microstrain.</summary>
    public (double AxialMicro, double HoopMicro) WallStrainMicro(double heightM, double angleDeg, AmbientState ambient)
    {
        var depth = Loads.Surface.ContactHeightM - heightM;
        var delta = _channel is not null ? (angleDeg - _channel.AzimuthDeg) * Math.PI / 180 : 0;
        var (p, nz) = SiloLoads.WallAt(Loads, Solid, depth, delta, _discharge is not null || _dischargeFactor > 0 ? _dischargeFactor : 0);
        var r = Shape.HalfSpanM;
        var t = Shape.WallThicknessM;
        var axialKPa = Wall.AxialStressKPa(nz, t);
        var hoopKPa = Wall.HoopStressKPa(p, r, t);

        // Wind: the wall above the gauge bends as a cantilever (windward side in tension) [D: beam theory, I = π·r³·t].
        var q = WindLoad.DynamicPressureKPa(ambient.WindMs);
        var dWind = (angleDeg - ambient.WindFromDeg) * Math.PI / 180;
        var above = Math.Max(0, Shape.WallHeightM - heightM);
        var momentKnM = q * WindLoad.DragCoefficient(true) * 2 * r * above * above / 2;
        axialKPa += momentKnM * Math.Cos(dWind) / (Math.PI * r * r * t);
        var (axial, hoop) = Wall.Strains(axialKPa, hoopKPa, Shape.YoungsModulusKPa, Shape.PoissonRatio);

        // Ovalisation n = 2: ring bending under the cos 2θ part of the wind pressure, M = p2·r²/3 [D: ring theory, n² − 1 = 3],
        // surface strain 6M/(E·t²), cp2 ≈ 0.9 [M?], reduced by the restraint of roof, stiffeners and contents (invented factor).
        var fill = Math.Clamp(MassKg / CapacityKg, 0, 1);
        var p2 = 0.9 * q;
        var ovalMicro = 1e6 * 2 * p2 * r * r / (Shape.YoungsModulusKPa * t * t) * _scenario.Weather.OvalisationRestraint * (1 - (0.8 * fill));
        hoop -= ovalMicro * Math.Cos(2 * dWind);
        return (axial, hoop);
    }

    private double GaugeValue(SensorState s, AmbientState ambient, TimeSpan elapsed)
    {
        var o = s.Options;
        var (axial, hoop) = WallStrainMicro(o.HeightM, s.AngleDeg, ambient);
        var temperature = TemperatureAt(s.AngleDeg, ambient);
        var strain = o.Kind == SensorKind.AxialStrain ? axial : hoop;
        strain += Bridges.ThermalOutputMicro(o.ThermalOutputMicroPerK, temperature, o.ReferenceTemperatureC);
        if (o.Kind == SensorKind.AxialStrain)
        {
            // The sunny side expands and the restrained shell bows: apparent axial strain ∝ the local warming against
            // the circumference's mean. The thermal stresses of an unloaded shell balance themselves, so the bowing
            // adds nothing to the axial force round a ring (its mean is zero); it bends the wall, it carries no load [D].
            strain += _scenario.Weather.SolarBowMicroPerK * (temperature - ShellMeanC(ambient));
        }

        strain += _scenario.Noise.StrainMicro * s.NoiseFactorAt(elapsed) * _noise.Gaussian();
        return o.ZeroOffsetMvPerV + Bridges.StrainBridgeMvPerV(o.Bridge, o.GaugeFactor, strain, Shape.PoissonRatio);
    }

    /// <summary>
    /// Azimuth of a sensor: its own AngleDeg for gauges; for a temperature sensor the angle of the
    /// first gauge that names it, else a trailing number of its id (T-W-180 → 180°), else 0.
    /// </summary>
    private static double AngleOf(SensorOptions s, SiloOptions silo)
    {
        if (s.Kind is SensorKind.AxialStrain or SensorKind.HoopStrain || s.AngleDeg != 0)
        {
            return s.AngleDeg;
        }

        if (s.Kind == SensorKind.Temperature)
        {
            var gauge = silo.Sensors.FirstOrDefault(g => g.Kind is SensorKind.AxialStrain or SensorKind.HoopStrain && g.TemperatureSensor == s.Id);
            if (gauge is not null)
            {
                return gauge.AngleDeg;
            }

            var dash = s.Id.LastIndexOf('-');
            if (dash >= 0 && int.TryParse(s.Id.AsSpan(dash + 1), System.Globalization.NumberStyles.None, System.Globalization.CultureInfo.InvariantCulture, out var deg) && deg < 360)
            {
                return deg;
            }
        }

        return 0;
    }

    private sealed class Delivery(double massKg, double rateKgPerS, int batches, TimeSpan gap, double offsetRatio, double azimuthDeg, TimeSpan start)
    {
        private readonly double _batchKg = massKg / batches;
        private double _inBatchKg;
        private int _batch;
        private TimeSpan _gapUntil = start;

        public double OffsetRatio { get; } = offsetRatio;

        public double AzimuthDeg { get; } = azimuthDeg;

        public bool Done => _batch >= batches;

        public bool InGap { get; private set; }

        public double Step(TimeSpan elapsed, double dtS, double jitter, double roomKg)
        {
            if (Done || elapsed < _gapUntil)
            {
                InGap = !Done;
                return 0;
            }

            InGap = false;
            var kg = Math.Min(Math.Min(rateKgPerS * jitter * dtS, _batchKg - _inBatchKg), Math.Max(0, roomKg));
            _inBatchKg += kg;
            if (_inBatchKg >= _batchKg - 1e-6 || roomKg <= 0)
            {
                _batch++;
                _inBatchKg = 0;
                _gapUntil = elapsed + gap;
                InGap = !Done;
            }

            return kg;
        }
    }

    private sealed class Discharge(double massKg, double rateKgPerS)
    {
        public double RemainingKg { get; set; } = massKg;

        public double RateKgPerS { get; } = rateKgPerS;
    }
}

/// <summary>An injected sensor fault and its parameters.</summary>
public sealed record ActiveFault(FaultKind Kind, TimeSpan From, TimeSpan Until, bool SendZero, double DriftPerHour, double SpikeSize, double SpikesPerMinute, double NoiseFactor)
{
    public bool IsActive(TimeSpan elapsed) => elapsed >= From && elapsed < Until;
}

/// <summary>State of one sensor: fault, zero drift, the value a stuck sensor keeps.</summary>
public sealed class SensorState(SensorOptions options, double angleDeg, Noise noise)
{
    public SensorOptions Options { get; } = options;

    public double AngleDeg { get; } = angleDeg;

    public double ZeroDriftMvPerV { get; set; }

    public ActiveFault? Fault { get; set; }

    private double? _stuckValue;
    private double _last;

    public double NoiseFactorAt(TimeSpan elapsed) => Fault is { Kind: FaultKind.Noisy } f && f.IsActive(elapsed) ? f.NoiseFactor : 1;

    /// <summary>The transmitted value for a true value, or null when the sensor sends nothing.</summary>
    public double? Apply(double truth, TimeSpan elapsed, double dtS)
    {
        var value = truth;
        if (Fault is { } f && f.IsActive(elapsed))
        {
            switch (f.Kind)
            {
                case FaultKind.Dead:
                    _stuckValue = null;
                    return f.SendZero ? 0.0 : null;
                case FaultKind.Stuck:
                    _stuckValue ??= _last;
                    return _stuckValue;
                case FaultKind.Drift:
                    value += f.DriftPerHour * (elapsed - f.From).TotalHours;
                    break;
                case FaultKind.Spikes:
                    if (noise.Chance(f.SpikesPerMinute * dtS / 60))
                    {
                        value += (noise.Uniform() < 0.5 ? -1 : 1) * f.SpikeSize;
                    }

                    break;
                case FaultKind.Noisy:
                    break;
            }

            _last = value;
            return value;
        }

        _stuckValue = null;
        // Without a fault the transmitter saturates at the ends of its range.
        if (!double.IsNaN(Options.RangeMin) && !double.IsNaN(Options.RangeMax))
        {
            value = Math.Clamp(value, Options.RangeMin, Options.RangeMax);
        }

        _last = value;
        return value;
    }
}
