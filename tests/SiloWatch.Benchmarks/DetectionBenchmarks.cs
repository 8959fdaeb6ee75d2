using System.Diagnostics;
using System.Globalization;
using SiloWatch.Mechanics;
using SiloWatch.Monitoring;
using SiloWatch.Monitoring.Alarms;
using SiloWatch.Monitoring.Wall;
using SiloWatch.Plant;

namespace SiloWatch.Benchmarks;

/// <summary>
/// Detection benchmark of the wall-load watch: invented telemetry for demo silo S1 through the whole
/// monitoring chain (SiloMonitor → WallWatch → AlarmEngine), once a second on a simulated clock.
/// Generator: load cells from the contents' support reactions; ring gauges from Mechanics' expected
/// strains for the mass and flow, plus an eccentric-discharge first harmonic (ratio × the expected mean
/// discharge load, ramped in over 10 s), wind gusts (n = 2 ovalisation and some n = 1 bending), one-sided
/// solar heating following the sun with passing clouds and a per-gauge residual thermal strain
/// (2–6 µε/K, unknown to the watch), and white noise; everything sent as mV/V and degC.
/// Usage: dotnet run -c Release --project tests/SiloWatch.Benchmarks -- detection [runsPerCase] [falseAlarmDays] [multiples, e.g. 0,1.2]
/// </summary>
public static class DetectionDriver
{
    private const string SiloId = "S1";

    public static int Run(string[] args)
    {
        var runs = args.Length > 0 ? int.Parse(args[0], CultureInfo.InvariantCulture) : 100;
        var days = args.Length > 1 ? int.Parse(args[1], CultureInfo.InvariantCulture) : 42;
        var multiples = args.Length > 2 ? args[2].Split(',').Select(x => double.Parse(x, CultureInfo.InvariantCulture)).ToArray() : [0.0, 0.5, 0.8, 1.2, 1.5, 2.0];
        var dir = Path.Combine(AppContext.BaseDirectory, "config");
        var materials = MaterialLibrary.Load(Path.Combine(dir, "materials.json"));
        var (plant, findings) = PlantLoader.LoadFile(Path.Combine(dir, "plant.demo.json"), materials.Names);
        if (findings.Count > 0)
        {
            Console.Error.WriteLine("demo plant has findings: " + string.Join("; ", findings));
            return 1;
        }

        var registry = new PlantRegistry(plant);
        registry.TryGetSilo("brackenford", SiloId, out var silo);
        var model = SiloModel.Create(silo.Options, materials.Get(silo.Options.Material));
        var setpoint = silo.Options.AlarmLimits.AsymmetryRatioA1;
        var clock = Stopwatch.StartNew();

        Console.WriteLine($"Detection benchmark, silo {silo.Key} ({silo.Options.Material}, d {silo.Options.Geometry.DiameterM} m, h {silo.Options.Geometry.WallHeightM} m), A1/A0 setpoint {setpoint}");
        Console.WriteLine("Eccentric discharges: true first-harmonic ratio = multiple × setpoint; equivalent e/r = ratio/2 (thin shell under N and M = N·e [D]).");
        Console.WriteLine($"{"multiple",8} {"ratio",6} {"e/r",5} {"runs",5} {"detected",9} {"median s",9} {"p90 s",7} {"max s",7} {"dir err med",12} {"dir err max",12}");
        // One installation: the gauges' residual thermal strains are learned once, over a sunny idle day, and every
        // detection run starts from that learned state (as a silo in service would).
        var warm = new Simulation(silo, model, seed: 1);
        var learned = warm.IdleDay();
        foreach (var multiple in multiples)
        {
            var ratio = multiple * setpoint;
            var times = new List<double>();
            var dirErrors = new List<double>();
            var detected = 0;
            for (var r = 0; r < runs; r++)
            {
                var sim = new Simulation(silo, model, seed: 1000 + (int)(multiple * 100) + (r * 7919), learned);
                var result = sim.EccentricDischarge(ratio);
                if (result.DetectedAfterS is not null && multiple == 0)
                {
                    Console.WriteLine(string.Create(CultureInfo.InvariantCulture, $"    false alarm in concentric run {r}: {result.Note}"));
                }

                if (result.DetectedAfterS is { } t)
                {
                    detected++;
                    times.Add(t);
                    dirErrors.Add(result.DirectionErrorDeg);
                }
            }

            times.Sort();
            dirErrors.Sort();
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"{multiple,8:0.0} {ratio,6:0.000} {ratio / 2,5:0.000} {runs,5} {100.0 * detected / runs,8:0.0}% {Pct(times, 0.5),9:0.0} {Pct(times, 0.9),7:0.0} {Pct(times, 1.0),7:0.0} {Pct(dirErrors, 0.5),12:0.0} {Pct(dirErrors, 1.0),12:0.0}"));
        }

        Console.WriteLine();
        Console.WriteLine($"False alarms: {days} days per case, 4 concentric discharges and 2 fills a day, wind gusts, noise.");
        Console.WriteLine($"{"case",-34} {"silo-h",7} {"wall alarms",12} {"per 1000 h",11} {"other alarms",13} {"max A1/A0",10}");
        foreach (var (name, sun) in new[] { ("concentric, overcast", false), ("concentric, sun and passing clouds", true) })
        {
            var sim = new Simulation(silo, model, seed: sun ? 77 : 78);
            var result = sim.Days(days, sun);
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"{name,-34} {result.Hours,7:0} {result.WallAlarms,12} {1000.0 * result.WallAlarms / result.Hours,11:0.00} {result.OtherAlarms,13} {result.MaxA1,10:0.000}"));
            foreach (var line in result.OtherAlarmIds.GroupBy(x => x).Select(g => $"    other: {g.Key} × {g.Count()}"))
            {
                Console.WriteLine(line);
            }
        }

        Console.WriteLine($"elapsed {clock.Elapsed.TotalSeconds:0} s");
        return 0;
    }

    private static double Pct(List<double> sorted, double p) =>
        sorted.Count == 0 ? double.NaN : sorted[Math.Min(sorted.Count - 1, (int)Math.Ceiling(p * sorted.Count) - 1 < 0 ? 0 : (int)Math.Ceiling(p * sorted.Count) - 1)];

    private sealed record DetectionResult(double? DetectedAfterS, double DirectionErrorDeg, string Note = "");

    private sealed record DaysResult(double Hours, int WallAlarms, int OtherAlarms, double MaxA1, List<string> OtherAlarmIds);

    /// <summary>A fake clock the whole chain shares.</summary>
    private sealed class SimClock(DateTimeOffset start) : TimeProvider
    {
        public DateTimeOffset Now { get; set; } = start;

        public override DateTimeOffset GetUtcNow() => Now;
    }

    private sealed class Simulation
    {
        private readonly SiloRef _silo;
        private readonly SiloModel _model;
        private readonly Random _random;
        private readonly SimClock _time = new(new DateTimeOffset(2026, 6, 1, 0, 0, 0, TimeSpan.Zero));
        private readonly SiloMonitor _monitor;
        private readonly WallWatch _watch;
        private readonly AlarmEngine _engine;
        private readonly double[] _expected;
        private readonly double[] _reactions;
        private readonly double[] _residual;
        private readonly GaugeModel?[] _gaugeOf;
        private readonly double[] _ringMean;
        private readonly int[] _ringOfGauge;
        private readonly List<AlarmTransition> _transitions = [];
        private readonly List<WallAssessment> _history = [];
        private bool _keepHistory;
        private WallAssessment? _lastAssessment;

        private double _massKg;
        private double _rateKgPerS;
        private double _ratio;
        private double _directionDeg;
        private long _dischargeStartMs = long.MinValue;
        private bool _sun;
        private double _cloud = 1;
        private double _cloudTarget = 1;
        private long _gustEndMs;
        private double _gustN2;
        private double _gustN1;
        private double _gustDirDeg;

        public Simulation(SiloRef silo, SiloModel model, int seed, WallSnapshot? learned = null)
        {
            _silo = silo;
            _model = model;
            _random = new Random(seed);
            _monitor = new SiloMonitor(silo, model, new MonitoringOptions(), _time);
            _watch = new WallWatch(silo, model, new WallWatchOptions());
            _engine = new AlarmEngine(AlarmDefinitions.ForSilo(silo, model), _time);
            _expected = new double[model.Gauges.Count];
            _reactions = new double[silo.Options.Weighing.SupportCount];
            var installation = new Random(12345);
            _residual = [.. model.Gauges.Select(_ => 2 + (4 * installation.NextDouble()))];
            _gaugeOf = new GaugeModel?[silo.Options.Sensors.Count];
            foreach (var g in model.Gauges)
            {
                _gaugeOf[g.SensorIndex] = g;
            }

            var rings = model.Gauges.Select(g => g.Ring).Distinct().ToList();
            _ringOfGauge = [.. model.Gauges.Select(g => rings.IndexOf(g.Ring))];
            _ringMean = new double[rings.Count];
            if (learned is not null)
            {
                _watch.Restore(learned with { State = DischargeState.Idle, BaselineMassKg = null });
            }
        }

        /// <summary>A sunny idle day (gauges learn their thermal sensitivity); returns the wall watch's snapshot.</summary>
        public WallSnapshot IdleDay()
        {
            _sun = true;
            _massKg = 0.8 * _model.CapacityKg;
            Step(24 * 3600, 0);
            return _watch.Snapshot(NowMs);
        }

        private long NowMs => _time.Now.ToUnixTimeMilliseconds();

        /// <summary>One eccentric discharge: idle warm-up, then discharge; time from onset to the first asymmetry alarm.</summary>
        public DetectionResult EccentricDischarge(double ratio)
        {
            _sun = _random.NextDouble() < 0.5;
            _time.Now = _time.Now.AddHours(6 + (12 * _random.NextDouble()));
            _massKg = (0.6 + (0.35 * _random.NextDouble())) * _model.CapacityKg;
            Step(900, 0);
            for (var i = 0; i < 900 && !(_watch.State == DischargeState.Idle && _lastAssessment?.StateChange is null); i++)
            {
                // A start-up transient of the inventory filter can read as a short fill: let it settle first.
                Step(1, 0);
            }

            _ratio = ratio;
            _directionDeg = 360 * _random.NextDouble();
            var rate = -(15 + (25 * _random.NextDouble()));
            var onset = NowMs;
            _transitions.Clear();
            _keepHistory = ratio == 0 || Environment.GetEnvironmentVariable("SW_DEBUG") is not null;
            Step(600, rate);
            var first = _transitions.FirstOrDefault(t => t.To == AlarmStateName.Unacknowledged && t.Condition.Contains("/asymmetry-a1/", StringComparison.Ordinal));
            if (first is null)
            {
                if (Environment.GetEnvironmentVariable("SW_DEBUG") is not null)
                {
                    foreach (var a in _history.Where((_, i) => i % 60 == 0))
                    {
                        Console.WriteLine($"      miss t {(a.TimestampMs - onset) / 1000} {a.State} " + string.Join(" | ", a.Rings.Select(r => $"{r.Ring} good {r.GoodGauges} A1 {r.A1Ratio:0.000} {r.Note}")));
                    }

                    foreach (var rd in _monitor.Readings.Where(x => x.Quality != Quality.Good))
                    {
                        Console.WriteLine($"      reading {rd.SensorId} {rd.Quality} {rd.QualityReason}");
                    }
                }

                return new DetectionResult(null, double.NaN);
            }

            var ring = _watch.Evaluate(NowMs, _monitor.Evaluate(NowMs)).Rings[0];
            var err = Math.Abs(ring.AsymmetryDirectionDeg - _directionDeg) % 360;
            var at = _history.FirstOrDefault(h => h.TimestampMs == first.TimestampMs);
            var note = $"{first.AlarmId} at {(first.TimestampMs - onset) / 1000.0:0} s, value {first.Value:0.000}, sun {_sun}, {first.Message[^40..]}"
                + (at is null ? "" : "; rings: " + string.Join(" | ", at.Rings.Select(r => $"{r.Ring} good {r.GoodGauges} A1 {r.A1Ratio:0.000} dA0 {(r.ChangeMicro.Count > 0 ? r.ChangeMicro[0].Amplitude : double.NaN):0.0} exp {r.ExpectedMeanMicro:0.0} dT1 {(r.TemperatureChangeK.Count > 1 ? r.TemperatureChangeK[1].Amplitude : double.NaN):0.00} {r.Note}")));
            return new DetectionResult((first.TimestampMs - onset) / 1000.0, err > 180 ? 360 - err : err, note);
        }

        /// <summary>Days of ordinary operation: concentric discharges and fills; wall alarms counted as false.</summary>
        public DaysResult Days(int days, bool sun)
        {
            _sun = sun;
            _massKg = 0.7 * _model.CapacityKg;
            var maxA1 = 0.0;
            var wall = 0;
            var others = new List<string>();
            for (var d = 0; d < days; d++)
            {
                var dayStart = NowMs;
                var plan = new List<(double StartH, double Rate, double Minutes)>
                {
                    (2 + _random.NextDouble(), 25, 0),
                    (7 + (2 * _random.NextDouble()), -(15 + (25 * _random.NextDouble())), 15 + (10 * _random.NextDouble())),
                    (10 + (2 * _random.NextDouble()), -(15 + (25 * _random.NextDouble())), 15 + (10 * _random.NextDouble())),
                    (13 + (2 * _random.NextDouble()), 25, 0),
                    (16 + (2 * _random.NextDouble()), -(15 + (25 * _random.NextDouble())), 15 + (10 * _random.NextDouble())),
                    (19 + (2 * _random.NextDouble()), -(15 + (25 * _random.NextDouble())), 15 + (10 * _random.NextDouble())),
                };
                foreach (var (startH, rate, minutes) in plan)
                {
                    var startMs = dayStart + (long)(startH * 3_600_000);
                    StepUntil(startMs, 0, ref maxA1);
                    var seconds = rate > 0
                        ? (int)Math.Max(0, ((0.9 * _model.CapacityKg) - _massKg) / rate)
                        : (int)Math.Min(minutes * 60, Math.Max(0, (_massKg - (0.15 * _model.CapacityKg)) / -rate));
                    StepUntil(NowMs + (seconds * 1000L), rate, ref maxA1);
                }

                StepUntil(dayStart + (24 * 3_600_000L), 0, ref maxA1);
                foreach (var t in _transitions.Where(t => t.To == AlarmStateName.Unacknowledged))
                {
                    if (t.Condition.Contains("/asymmetry-", StringComparison.Ordinal) || t.Condition.Contains("/excess/", StringComparison.Ordinal))
                    {
                        wall++;
                    }
                    else
                    {
                        others.Add(t.AlarmId);
                    }
                }

                _transitions.Clear();
                foreach (var a in _engine.Active.Where(a => a.State is AlarmStateName.Latched or AlarmStateName.ReturnedToNormalUnacknowledged or AlarmStateName.Acknowledged))
                {
                    // The operator acknowledges and resets what the day left standing.
                    _engine.Acknowledge(a.AlarmId, "bench");
                    _engine.Reset(a.AlarmId, "bench");
                }
            }

            return new DaysResult(days * 24.0, wall, others.Count, maxA1, others);
        }

        private void StepUntil(long untilMs, double rate, ref double maxA1)
        {
            while (NowMs < untilMs)
            {
                var a = StepOnce(rate);
                foreach (var r in a.Rings)
                {
                    if (double.IsFinite(r.A1Ratio))
                    {
                        maxA1 = Math.Max(maxA1, r.A1Ratio);
                    }
                }
            }
        }

        private void Step(int seconds, double rate)
        {
            for (var i = 0; i < seconds; i++)
            {
                StepOnce(rate);
            }
        }

        private WallAssessment StepOnce(double rate)
        {
            _time.Now = _time.Now.AddSeconds(1);
            var now = NowMs;
            _rateKgPerS = rate;
            _massKg = Math.Clamp(_massKg + rate, 0, _model.CapacityKg);
            var discharging = rate < 0;
            if (discharging && _dischargeStartMs == long.MinValue)
            {
                _dischargeStartMs = now;
            }
            else if (!discharging)
            {
                _dischargeStartMs = long.MinValue;
            }

            var state = _model.StateAtMass(_massKg, discharging ? FlowMode.Discharging : FlowMode.Filling);
            _model.ExpectedStrains(state, _expected);
            _model.SupportReactionsKn(state, _reactions);
            Array.Clear(_ringMean);
            var counts = new int[_ringMean.Length];
            for (var g = 0; g < _expected.Length; g++)
            {
                _ringMean[_ringOfGauge[g]] += _expected[g];
                counts[_ringOfGauge[g]]++;
            }

            for (var r = 0; r < _ringMean.Length; r++)
            {
                _ringMean[r] = Math.Abs(_ringMean[r] / counts[r]);
            }

            var ramp = discharging ? Math.Min(1.0, (now - _dischargeStartMs) / 10_000.0) : 0;
            var ratio = discharging ? _ratio : 0;
            Weather(now);

            var hour = _time.Now.TimeOfDay.TotalHours;
            var sunAz = 90 + (180 * Math.Clamp((hour - 6) / 12, 0, 1));
            var sunK = _sun && hour is > 6 and < 18 ? 15 * Math.Sin(Math.PI * (hour - 6) / 12) * _cloud : 0;
            var air = 14 + (5 * Math.Sin(Math.PI * (hour - 9) / 12));
            var structureKn = Units.MassKgToWeightKn(_silo.Options.Weighing.StructureMassKg) / _reactions.Length;
            var nu = _silo.Options.Geometry.WallPoissonRatio;
            var sensors = _silo.Options.Sensors;
            for (var i = 0; i < sensors.Count; i++)
            {
                var o = sensors[i];
                double value;
                if (o.Kind == SensorKind.LoadCell)
                {
                    value = LoadCellConversion.SignalMvPerV(structureKn + _reactions[o.Support - 1], o, air) + (2e-4 * Gaussian());
                }
                else if (_gaugeOf[i] is { } g)
                {
                    var t = GaugeTemperature(g.AngleDeg, air, sunK, sunAz);
                    var sign = g.Kind == SensorKind.AxialStrain ? -1.0 : 1.0;
                    var mean = _ringMean[_ringOfGauge[g.Index]];
                    var wind = WindMicro(g, now);
                    var micro = _expected[g.Index]
                        + (sign * ramp * ratio * mean * Math.Cos((g.AngleDeg - _directionDeg) * Math.PI / 180))
                        + wind
                        + (_residual[g.Index] * (t - 20))
                        + (o.ThermalOutputMicroPerK * (t - o.ReferenceTemperatureC))
                        + (0.5 * Gaussian());
                    value = BridgeEquations.MvPerVFromStrainMicro(o.Bridge, micro, o.GaugeFactor, nu);
                }
                else
                {
                    if (now / 1000 % 5 != 0)
                    {
                        continue;
                    }

                    var angle = double.Parse(o.Id.AsSpan(o.Id.LastIndexOf('-') + 1), CultureInfo.InvariantCulture);
                    value = GaugeTemperature(angle, air, sunK, sunAz) + (0.05 * Gaussian());
                }

                _monitor.OnSample(new TelemetrySample(_silo.Index, i, now, value));
            }

            var inventory = _monitor.Evaluate(now);
            _watch.Update(_monitor.Readings);
            var assessment = _watch.Evaluate(now, inventory);
            _lastAssessment = assessment;
            if (_keepHistory)
            {
                _history.Add(assessment);
            }

            _transitions.AddRange(_engine.Evaluate(assessment.Conditions));
            return assessment;
        }

        private static double GaugeTemperature(double angleDeg, double air, double sunK, double sunAz) =>
            air + (sunK * Math.Max(0, Math.Cos((angleDeg - sunAz) * Math.PI / 180)));

        private void Weather(long now)
        {
            // Passing clouds: the sunlit excess moves toward a new level over about five minutes.
            if (_random.NextDouble() < 1.0 / 1200)
            {
                _cloudTarget = _random.NextDouble() < 0.5 ? 0.1 : 1.0;
            }

            _cloud += (_cloudTarget - _cloud) / 300;

            // Gusts: about six an hour, 5–30 s, ovalisation up to 6 µε and bending up to 8 µε.
            if (now > _gustEndMs && _random.NextDouble() < 6.0 / 3600)
            {
                _gustEndMs = now + (long)(5000 + (25000 * _random.NextDouble()));
                _gustN2 = 6 * _random.NextDouble();
                _gustN1 = 8 * _random.NextDouble();
                _gustDirDeg = 360 * _random.NextDouble();
            }
        }

        private double WindMicro(GaugeModel g, long now)
        {
            if (now > _gustEndMs)
            {
                return 0;
            }

            var a = (g.AngleDeg - _gustDirDeg) * Math.PI / 180;
            var bending = g.Kind == SensorKind.AxialStrain ? _gustN1 * Math.Cos(a) : 0;
            return (_gustN2 * Math.Cos(2 * a)) + bending;
        }

        private double Gaussian()
        {
            var u1 = 1.0 - _random.NextDouble();
            var u2 = _random.NextDouble();
            return Math.Sqrt(-2 * Math.Log(u1)) * Math.Cos(2 * Math.PI * u2);
        }
    }
}
