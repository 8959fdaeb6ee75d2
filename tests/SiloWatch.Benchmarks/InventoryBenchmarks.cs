using System.Globalization;
using System.Text;
using BenchmarkDotNet.Attributes;
using BenchmarkDotNet.Engines;
using SiloWatch.Mechanics;
using SiloWatch.Monitoring;
using SiloWatch.Plant;

namespace SiloWatch.Benchmarks;

/// <summary>
/// Cost of <see cref="SiloMonitor.OnSample"/> per sample (goal ≤ 1 µs, no allocation): one op = one
/// sample, cycling through an hour of pre-built samples of a silo at rest (so the wrap is benign).
/// S1 is fully weighed; C1 is floor-weighed with its wall ring (the floor-load fusion runs once a scan).
/// Run: dotnet run -c Release --project tests/SiloWatch.Benchmarks -- --filter '*InventoryBenchmarks*'
/// </summary>
[MemoryDiagnoser]
public class InventoryBenchmarks
{
    private SiloMonitor _monitor = null!;
    private TelemetrySample[] _samples = [];
    private int _next;

    [Params("S1", "C1")]
    public string Silo { get; set; } = "S1";

    [GlobalSetup]
    public void Setup()
    {
        var plant = DemoPlantFiles.Load();
        var silo = plant.Silo(Silo);
        var model = plant.Model(Silo);
        var sim = new InventorySimulation(silo, model, InventorySimulation.Truth.Nominal(model), seed: 1);
        _monitor = new SiloMonitor(silo, model, new MonitoringOptions(), TimeProvider.System);
        foreach (var s in sim.Samples(30, _ => 0))
        {
            _monitor.OnSample(s);
        }

        _monitor.Tare("benchmark", sim.LastTimestampMs);
        _samples = [.. sim.Samples(3600, _ => 0.5 * model.CapacityKg)];
        _next = 0;
    }

    [Benchmark]
    public void OnSample()
    {
        _monitor.OnSample(_samples[_next]);
        if (++_next == _samples.Length)
        {
            _next = 0;
        }
    }
}

/// <summary>
/// Accuracy of the inventory against known truth, printed as a table: mass error (RMS, max, % of
/// capacity) and how often the stated 95 % interval covers the truth, for each weighing arrangement
/// with noise, drift and one failed sensor. Simulated plant (invented), seeded.
/// Run: dotnet run -c Release --project tests/SiloWatch.Benchmarks -- --filter '*InventoryAccuracy*'
/// (the report prints once, before the timing of one short run).
/// </summary>
[SimpleJob(RunStrategy.ColdStart, launchCount: 1, warmupCount: 0, iterationCount: 1)]
public class InventoryAccuracy
{
    [GlobalSetup]
    public void Report() => Console.WriteLine(Run(runs: int.TryParse(Environment.GetEnvironmentVariable("SILOWATCH_ACCURACY_RUNS"), out var n) ? n : 12));

    [Benchmark]
    public double OneFullWeighingRun() => Evaluate(Scenarios[0], seed: 99, out _).RmsPct;

    /// <summary>Set SILOWATCH_TRACE_ACCURACY=1 to print every evaluation (diagnosis).</summary>
    private static readonly bool Trace = Environment.GetEnvironmentVariable("SILOWATCH_TRACE_ACCURACY") == "1";

    public static readonly Scenario[] Scenarios =
    [
        new("full weighing, 4 of 4 legs", "S1", Ring: false, Calibrate: false, EccentricityM: 0.1, Fail: "LC3", Drift: "LC1"),
        new("partial, 1 of 3 legs, e = 0.15 m, ring", "S2", Ring: true, Calibrate: false, EccentricityM: 0.15, Fail: "SG-R1-120", Drift: "SG-R1-000"),
        new("partial, 1 of 3 legs, e = 0.15 m, no ring", "S2", Ring: false, Calibrate: false, EccentricityM: 0.15, Fail: "T-R1-000", Drift: "LC1"),
        new("floor + wall ring", "C1", Ring: true, Calibrate: false, EccentricityM: 0, Fail: "LC2", Drift: "SG-R1-060"),
        new("floor + wall ring, ring gain calibrated", "C1", Ring: true, Calibrate: false, EccentricityM: 0, Fail: "LC2", Drift: "SG-R1-060", CalibrateRing: true),
        new("floor only, library K·mu", "C1", Ring: false, Calibrate: false, EccentricityM: 0, Fail: "LC2", Drift: "LC1"),
        new("floor only, calibrated z0", "C1", Ring: false, Calibrate: true, EccentricityM: 0, Fail: "LC2", Drift: "LC1"),
    ];

    public sealed record Scenario(string Name, string SiloId, bool Ring, bool Calibrate, double EccentricityM, string Fail, string Drift, bool CalibrateRing = false);

    public sealed record Figures(double RmsPct, double MaxPct, double Coverage, double LevelCoverage, double NoEstimate, double MeanHalfWidthPct, int Points);

    public static string Run(int runs)
    {
        var sb = new StringBuilder();
        sb.AppendLine(CultureInfo.InvariantCulture, $"Inventory accuracy: {runs} simulated fill/discharge runs per scenario (about 2 h each at 1 scan/s); truth drawn per run:");
        sb.AppendLine("  unit weight uniform in the library range, K·mu log-normal about the library mean, cell span and combined errors,");
        sb.AppendLine("  ring gain (E, t, GF) 5 %, noise 0.00005 mV/V, a zero drift of 0.0002 mV/V per hour, one sensor silent for 20 min.");
        sb.AppendLine("  Errors in % of capacity; coverage = share of 10 s evaluations whose stated 95 % interval holds the true mass.");
        sb.AppendLine();
        sb.AppendLine("scenario                                    | RMS %cap | max %cap | 95% cover | level cover | no estimate | mean ±95% %cap | method");
        sb.AppendLine("--------------------------------------------|----------|----------|-----------|-------------|-------------|----------------|-------");
        var only = Environment.GetEnvironmentVariable("SILOWATCH_ACCURACY_SCENARIO");
        foreach (var scenario in Scenarios.Where((_, k) => string.IsNullOrEmpty(only) || only == k.ToString(CultureInfo.InvariantCulture)))
        {
            var all = new List<(double Err, bool Covered, bool LevelCovered, double Half)>();
            var none = 0;
            var method = "";
            for (var r = 0; r < runs; r++)
            {
                Evaluate(scenario, seed: 1000 + r, out var points, out var noEstimate, out method);
                all.AddRange(points);
                none += noEstimate;
            }

            var f = Summarise(all, none);
            sb.AppendLine(CultureInfo.InvariantCulture,
                $"{scenario.Name,-44}| {f.RmsPct,8:0.000} | {f.MaxPct,8:0.000} | {f.Coverage,9:P1} | {f.LevelCoverage,11:P1} | {f.NoEstimate,11:P1} | {f.MeanHalfWidthPct,14:0.000} | {method}");
        }

        return sb.ToString();
    }

    public static Figures Evaluate(Scenario scenario, int seed, out int points)
    {
        Evaluate(scenario, seed, out var list, out var none, out _);
        points = list.Count;
        return Summarise(list, none);
    }

    private static Figures Summarise(List<(double Err, bool Covered, bool LevelCovered, double Half)> all, int none)
    {
        var n = Math.Max(1, all.Count);
        return new Figures(
            Math.Sqrt(all.Sum(p => p.Err * p.Err) / n),
            all.Count == 0 ? double.NaN : all.Max(p => Math.Abs(p.Err)),
            all.Count(p => p.Covered) / (double)n,
            all.Count(p => p.LevelCovered) / (double)n,
            none / (double)(all.Count + none),
            all.Count == 0 ? double.NaN : all.Average(p => p.Half),
            all.Count);
    }

    private static void Evaluate(Scenario scenario, int seed, out List<(double Err, bool Covered, bool LevelCovered, double Half)> points, out int noEstimate, out string method)
    {
        var plant = DemoPlantFiles.Load();
        var silo = plant.Silo(scenario.SiloId);
        var model = plant.Model(scenario.SiloId);
        var random = new Random(seed);
        var truth = InventorySimulation.Truth.Draw(model, random, scenario.EccentricityM);
        var options = new MonitoringOptions();
        var capacityKg = model.CapacityKg;
        if (Trace)
        {
            var e = model.Expected;
            Console.WriteLine(FormattableString.Invariant(
                $"seed {seed}: true unit weight {truth.Properties.UnitWeightKnM3:0.00} kN/m3 (library {e.UnitWeightKnM3:0.00}), K·mu {truth.Properties.KMu:0.0000} (library {e.KMu:0.0000}, ln ratio {Math.Log(truth.Properties.KMu / e.KMu):0.000})"));
        }

        InventoryCalibration? calibration = null;
        if (scenario.Calibrate)
        {
            calibration = CalibrationFill(silo, model, truth, seed, options);
        }

        if (scenario.CalibrateRing)
        {
            calibration = RingCalibrationFill(silo, model, truth, seed, options);
        }

        var sim = new InventorySimulation(silo, model, truth, seed) { DriftSensor = scenario.Drift };
        if (!scenario.Ring)
        {
            foreach (var s in silo.Sensors.Where(s => s.Options.Kind == SensorKind.AxialStrain))
            {
                sim.Silent.Add(s.Id);
            }
        }

        var monitor = new SiloMonitor(silo, model, options, TimeProvider.System);
        if (calibration is not null)
        {
            monitor.ApplyCalibration(calibration);
        }

        var profile = Profile(capacityKg);
        var failFrom = (int)(0.4 * profile.Length);
        var evaluated = new List<(double, bool, bool, double)>();
        noEstimate = 0;
        for (var i = 0; i < profile.Length; i++)
        {
            sim.Failed = i >= failFrom && i < failFrom + 1200 ? scenario.Fail : null;
            foreach (var sample in sim.Scan(profile[i], i))
            {
                monitor.OnSample(sample);
            }

            if (i == 60)
            {
                monitor.Tare("commissioning", sim.LastTimestampMs);
            }

            if (i > 120 && i % 10 == 0)
            {
                var e = monitor.Evaluate(sim.LastTimestampMs);
                if (!double.IsFinite(e.MassKg) || e.Quality == Quality.Bad)
                {
                    noEstimate++;
                    continue;
                }

                var trueLevel = sim.TrueLevelM(profile[i]);
                if (Trace)
                {
                    Console.WriteLine(FormattableString.Invariant($"{i,6} truth {profile[i],10:0} est {e.MassKg,10:0} [{e.MassLow95Kg,10:0}, {e.MassHigh95Kg,10:0}] rate {e.RateKgPerS,7:0.0} floor {monitor.LastNetLoadKn:0} kN ring {monitor.LastWallLoadKn:0} kN below {monitor.LastBelowRingLoadKn:0} kN {e.Quality} {e.QualityReason}"));
                }

                evaluated.Add((
                    (e.MassKg - profile[i]) / capacityKg * 100,
                    profile[i] >= e.MassLow95Kg && profile[i] <= e.MassHigh95Kg,
                    trueLevel >= e.LevelLow95M - 1e-6 && trueLevel <= e.LevelHigh95M + 1e-6,
                    (e.MassHigh95Kg - e.MassLow95Kg) / 2 / capacityKg * 100));
            }
        }

        method = monitor.Evaluate(sim.LastTimestampMs).Method;
        points = evaluated;
    }

    // A calibration fill with delivery records: the contents known to ±0.3 % at each minute.
    private static InventoryCalibration CalibrationFill(SiloRef silo, SiloModel model, InventorySimulation.Truth truth, int seed, MonitoringOptions options)
    {
        var points = new List<CalibrationPoint>();
        var last = RecordedFill(silo, model, truth, seed, options, ring: false, (monitor, t, knownKg) =>
            points.Add(new CalibrationPoint(t, monitor.LastNetLoadKn, knownKg)));
        var fit = InventoryCalibrator.FitFloorLoad(model, points, floorLoadStdKn: 5, massStdKg: 0.003 * model.CapacityKg);
        return fit.Confirm("benchmark", last, fit.Note);
    }

    // The same fill of the floor + ring silo: the ring's gain fitted against known total = floor + gain·ring + friction below the ring.
    private static InventoryCalibration RingCalibrationFill(SiloRef silo, SiloModel model, InventorySimulation.Truth truth, int seed, MonitoringOptions options)
    {
        var points = new List<RingGainPoint>();
        var last = RecordedFill(silo, model, truth, seed, options, ring: true, (monitor, _, knownKg) =>
        {
            if (monitor.RingGainPointAt(knownKg) is { } point)
            {
                points.Add(point);
            }
        });
        return RingGainCalibrator.Fit(points, floorLoadStdKn: 5, massStdKg: 0.003 * model.CapacityKg).Confirm("benchmark", last);
    }

    // The first half of the profile, tared when empty, with a delivery record (±0.3 %) handed to take at each minute; returns the last timestamp.
    private static long RecordedFill(SiloRef silo, SiloModel model, InventorySimulation.Truth truth, int seed, MonitoringOptions options, bool ring,
        Action<SiloMonitor, long, double> take)
    {
        var sim = new InventorySimulation(silo, model, truth, seed + 7);
        if (!ring)
        {
            foreach (var s in silo.Sensors.Where(s => s.Options.Kind == SensorKind.AxialStrain))
            {
                sim.Silent.Add(s.Id);
            }
        }

        var monitor = new SiloMonitor(silo, model, options, TimeProvider.System);
        var random = new Random(seed + 11);
        var profile = Profile(model.CapacityKg);
        for (var i = 0; i < profile.Length / 2; i++)
        {
            foreach (var sample in sim.Scan(profile[i], i))
            {
                monitor.OnSample(sample);
            }

            if (i == 60)
            {
                monitor.Tare("commissioning", sim.LastTimestampMs);
            }

            if (i > 120 && i % 60 == 0 && profile[i] > 0)
            {
                take(monitor, sim.LastTimestampMs, profile[i] * (1 + (0.003 * InventorySimulation.Gaussian(random))));
            }
        }

        return sim.LastTimestampMs;
    }

    // Empty 2 min, fill to 90 % in an hour, rest 10 min, discharge to 20 %, rest 10 min.
    private static double[] Profile(double capacityKg)
    {
        var rate = 0.9 * capacityKg / 3600;
        var list = new List<double>();
        for (var i = 0; i < 120; i++)
        {
            list.Add(0);
        }

        for (var m = 0.0; m < 0.9 * capacityKg; m += rate)
        {
            list.Add(m);
        }

        for (var i = 0; i < 600; i++)
        {
            list.Add(0.9 * capacityKg);
        }

        for (var m = 0.9 * capacityKg; m > 0.2 * capacityKg; m -= rate)
        {
            list.Add(m);
        }

        for (var i = 0; i < 600; i++)
        {
            list.Add(0.2 * capacityKg);
        }

        return [.. list];
    }
}

/// <summary>The demo plant and material files copied to the benchmark output.</summary>
internal sealed class DemoPlantFiles
{
    private static readonly Lazy<DemoPlantFiles> Instance = new(() => new DemoPlantFiles());

    private DemoPlantFiles()
    {
        var dir = Path.Combine(AppContext.BaseDirectory, "config");
        Materials = MaterialLibrary.Load(Path.Combine(dir, "materials.json"));
        var (plant, _) = PlantLoader.LoadFile(Path.Combine(dir, "plant.demo.json"), Materials.Names);
        Registry = new PlantRegistry(plant);
    }

    public MaterialLibrary Materials { get; }

    public PlantRegistry Registry { get; }

    public static DemoPlantFiles Load() => Instance.Value;

    public SiloRef Silo(string id) => Registry.TryGetSilo("brackenford", id, out var s) ? s : throw new ArgumentException(id);

    public SiloModel Model(string id) => SiloModel.Create(Silo(id).Options, Materials.Get(Silo(id).Options.Material));
}

/// <summary>
/// A small plant generator with known truth (independent of the simulator under simulators/):
/// the mechanics model with the run's true properties gives reactions, floor load and wall strain;
/// each sensor adds its own errors. Invented data.
/// </summary>
public sealed class InventorySimulation
{
    private readonly SiloRef _silo;
    private readonly SiloModel _truthModel;
    private readonly Truth _truth;
    private readonly Random _random;
    private readonly double[] _reactions;
    private readonly double[] _strains;
    private readonly Dictionary<int, int> _gaugeOfSensor;
    private readonly int _cells;

    public InventorySimulation(SiloRef silo, SiloModel libraryModel, Truth truth, int seed)
    {
        _silo = silo;
        _truth = truth;
        _truthModel = libraryModel.WithExpected(truth.Properties);
        _random = new Random(seed);
        _reactions = new double[Math.Max(3, silo.Options.Weighing.SupportCount)];
        _strains = new double[_truthModel.Gauges.Count];
        _gaugeOfSensor = _truthModel.Gauges.ToDictionary(g => g.SensorIndex, g => g.Index);
        _cells = silo.Sensors.Count(s => s.Options.Kind == SensorKind.LoadCell);
    }

    /// <summary>What is true in one run: the solid's properties, each sensor's error, the off-centre load.</summary>
    public sealed record Truth(SolidProperties Properties, double SpanErrorStd, double CombinedErrorPctRo, double RingGainStd, double EccentricityM, double EccentricityAzimuthDeg, int Seed)
    {
        public static Truth Nominal(SiloModel model) => new(model.Expected, 0, 0, 0, 0, 0, 1);

        public static Truth Draw(SiloModel model, Random random, double eccentricityM)
        {
            var m = model.Material;
            var gamma = m.UnitWeightLowerKnM3 + (random.NextDouble() * (m.UnitWeightUpperKnM3 - m.UnitWeightLowerKnM3));
            var sigmaLnKMu = Math.Sqrt(Math.Pow(Math.Log(m.KFactor), 2) + Math.Pow(Math.Log(m.WallFrictionFactor), 2)) / 1.645;
            var kMu = model.Expected.KMu * Math.Exp(sigmaLnKMu * Gaussian(random));
            var props = new SolidProperties(gamma, model.Expected.K, kMu / model.Expected.K);
            return new Truth(props, 0.0005, 0.02, 0.05, eccentricityM, random.NextDouble() * 360, random.Next());
        }
    }

    public string? Failed { get; set; }

    public string? DriftSensor { get; set; }

    public HashSet<string> Silent { get; } = new(StringComparer.Ordinal);

    public long StartMs { get; } = 1_767_225_600_000; // 2026-01-01T00:00Z

    public long LastTimestampMs { get; private set; }

    public double TrueLevelM(double massKg) => _truthModel.StateAtMass(massKg).LevelM;

    private Dictionary<int, (double Span, double Offset, double Gain, double Thermal)>? _sensorErrors;
    private int _nextScan;

    /// <summary>Samples of the next <paramref name="scans"/> scans, carrying on from the last call.</summary>
    public IEnumerable<TelemetrySample> Samples(int scans, Func<int, double> massAt)
    {
        for (var i = 0; i < scans; i++)
        {
            foreach (var s in Scan(massAt(i), _nextScan++))
            {
                yield return s;
            }
        }
    }

    /// <summary>One sample per sensor for scan <paramref name="i"/> (1 s apart) with the contents' mass.</summary>
    public IEnumerable<TelemetrySample> Scan(double massKg, int i)
    {
        var errors = _sensorErrors ??= DrawSensorErrors();
        var t = StartMs + (i * 1000L);
        LastTimestampMs = t;
        var hours = i / 3600.0;
        var temperatureC = 15 + (10 * Math.Sin(2 * Math.PI * hours / 4));
        var state = _truthModel.StateAtMass(massKg, FlowMode.Filling, _truth.EccentricityM, _truth.EccentricityAzimuthDeg);
        var loads = _truthModel.Expect(state);
        var weighing = _silo.Options.Weighing;
        if (weighing.SupportCount >= 3)
        {
            _truthModel.SupportReactionsKn(state, _reactions);
        }

        _truthModel.ExpectedStrains(state, _strains);
        // The structure is shared by all supports (PlantOptions: StructureMassKg); floor cells carry the floor's own.
        var structureKn = Units.MassKgToWeightKn(weighing.StructureMassKg) /
            Math.Max(1, weighing.Arrangement == WeighingArrangement.FloorOnly ? _cells : weighing.SupportCount);
        foreach (var s in _silo.Sensors)
        {
            if (Silent.Contains(s.Id) || s.Id == Failed)
            {
                continue;
            }

            var o = s.Options;
            var (span, offset, gain, thermal) = errors[s.Index];
            var drift = s.Id == DriftSensor ? 0.0002 * hours : 0; // 0.01 % RO per hour on a 2 mV/V cell
            double value;
            switch (o.Kind)
            {
                case SensorKind.LoadCell:
                    var contents = weighing.Arrangement == WeighingArrangement.FloorOnly ? loads.FloorLoadKn / _cells : _reactions[o.Support - 1];
                    var forceKn = ((structureKn + contents) * (1 + span)) + offset;
                    value = LoadCellConversion.SignalMvPerV(forceKn, o, temperatureC);
                    // The cell's true temperature coefficients differ from the datasheet's by up to a fifth.
                    value += thermal * o.ZeroTempCoeffPctRoPerK / 100 * o.RatedOutputMvPerV * (temperatureC - o.ReferenceTemperatureC);
                    break;
                case SensorKind.AxialStrain or SensorKind.HoopStrain:
                    var micro = _gaugeOfSensor.TryGetValue(s.Index, out var g) && double.IsFinite(_strains[g]) ? _strains[g] : 0;
                    if (o.Kind == SensorKind.AxialStrain && _truth.EccentricityM != 0)
                    {
                        // Thin shell under N and M = N·e: n(θ) = n0·[1 + 2(e/r)·cos(θ − θ_e)] [D].
                        micro *= 1 + (2 * _truth.EccentricityM / (0.5 * _silo.Options.Geometry.DiameterM) * Math.Cos((o.AngleDeg - _truth.EccentricityAzimuthDeg) * Math.PI / 180));
                    }

                    micro = (micro * (1 + gain)) + (o.ThermalOutputMicroPerK * (1 + thermal) * (temperatureC - o.ReferenceTemperatureC));
                    value = BridgeEquations.MvPerVFromStrainMicro(o.Bridge, micro, o.GaugeFactor, _silo.Options.Geometry.WallPoissonRatio);
                    break;
                default:
                    yield return new TelemetrySample(_silo.Index, s.Index, t, Math.Round(temperatureC + (0.05 * Gaussian(_random)), 2));
                    continue;
            }

            yield return new TelemetrySample(_silo.Index, s.Index, t, value + drift + (5e-5 * Gaussian(_random)));
        }
    }

    private Dictionary<int, (double, double, double, double)> DrawSensorErrors()
    {
        var r = new Random(_truth.Seed);
        var d = new Dictionary<int, (double, double, double, double)>();
        // One ring gain error for the whole ring (modulus, thickness: common to every gauge), a little of its own per gauge.
        var ringGain = _truth.RingGainStd * Gaussian(r);
        foreach (var s in _silo.Sensors)
        {
            var o = s.Options;
            var span = _truth.SpanErrorStd * Gaussian(r);
            var offset = o.Kind == SensorKind.LoadCell ? (_truth.CombinedErrorPctRo / 100 * o.CapacityKn * ((2 * r.NextDouble()) - 1)) : 0;
            var gain = ringGain + (0.01 * Gaussian(r));
            var thermal = 0.2 * ((2 * r.NextDouble()) - 1); // uniform ±20 %: σ 11.5 %
            d[s.Index] = (span, offset, gain, thermal);
        }

        return d;
    }

    public static double Gaussian(Random r) => Math.Sqrt(-2.0 * Math.Log(1.0 - r.NextDouble())) * Math.Cos(2.0 * Math.PI * r.NextDouble());
}
