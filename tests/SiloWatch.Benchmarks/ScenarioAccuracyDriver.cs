using System.Globalization;
using SiloWatch.Mechanics;
using SiloWatch.Messaging;
using SiloWatch.Monitoring;
using SiloWatch.Plant;
using SiloWatch.Simulator;

namespace SiloWatch.Benchmarks;

/// <summary>
/// Inventory accuracy against the simulator's ground truth: a scenario is stepped in simulated
/// time, every message goes through the service's decoder and monitors, and each second every
/// silo's estimate is compared with the true mass and its 95 % interval checked for coverage.
/// Usage: dotnet run -c Release --project tests/SiloWatch.Benchmarks -- scenario-accuracy [scenario.json ...]
/// </summary>
public static class ScenarioAccuracyDriver
{
    /// <summary>Set SILOWATCH_TRACE_SCENARIO to a silo id to print each of its evaluations (diagnosis).</summary>
    private static readonly string? Trace = Environment.GetEnvironmentVariable("SILOWATCH_TRACE_SCENARIO");

    public static int Run(string[] args)
    {
        var root = FindRepositoryRoot();
        var scenarios = args.Length > 0
            ? args
            : ["normal-day.json", "load-cell-failure-during-filling.json", "eccentric-discharge.json", "sunny-idle-afternoon.json"];
        Console.WriteLine("scenario                              silo  method          samples  RMS %cap  max %cap  95% cover  good/unc/bad %");
        foreach (var name in scenarios)
        {
            var path = File.Exists(name) ? name : Path.Combine(root, "simulators", "scenarios", name);
            RunScenario(root, path);
        }

        return 0;
    }

    private static void RunScenario(string root, string scenarioPath)
    {
        var options = new SimulatorRunOptions
        {
            PlantPath = Path.Combine(root, "config", "plant.demo.json"),
            MaterialsPath = Path.Combine(root, "config", "materials.json"),
            ScenarioPath = scenarioPath,
            Speed = 1000,
            Seed = 7,
        };
        var model = SimulatorRunner.CreateModel(options, DateTimeOffset.UtcNow);
        var (plant, findings) = PlantLoader.LoadFile(options.PlantPath);
        if (findings.Count > 0)
        {
            throw new InvalidOperationException(string.Join("; ", findings));
        }

        var registry = new PlantRegistry(plant);
        var materials = MaterialLibrary.Load(options.MaterialsPath);
        var clock = new SimulatedClock();
        var decoderOptions = new TelemetryDecoderOptions { MaxLateness = TimeSpan.Zero, MaxFutureSkew = TimeSpan.FromDays(3650) };
        var silos = registry.Silos.ToDictionary(
            s => s.Key,
            s =>
            {
                materials.TryGet(s.Options.Material, out var material);
                var siloModel = SiloModel.Create(s.Options, material!);
                return new Tracked(s, new SiloMonitor(s, siloModel, new MonitoringOptions(), clock), new TelemetryDecoder(s, decoderOptions), siloModel.CapacityKg);
            },
            StringComparer.Ordinal);

        var nextEvaluation = DateTimeOffset.MinValue;
        foreach (var tick in model.Run())
        {
            clock.Now = tick.Time;
            foreach (var outgoing in tick.Messages)
            {
                var m = outgoing.Message;
                if (silos.TryGetValue(m.Site + "/" + m.Silo, out var tracked))
                {
                    tracked.Decoder.Decode(m.ToPayload(), tick.Time.ToUnixTimeMilliseconds(), tracked);
                }
            }

            if (tick.Time < nextEvaluation)
            {
                continue;
            }

            nextEvaluation = tick.Time.AddSeconds(1);
            foreach (var truth in tick.Truth)
            {
                if (silos.TryGetValue(truth.Site + "/" + truth.Silo, out var tracked))
                {
                    var estimate = tracked.Monitor.Evaluate(tick.Time.ToUnixTimeMilliseconds());
                    tracked.Score(estimate, truth.MassKg);
                    if (Trace == tracked.Silo.SiloId)
                    {
                        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                            $"{tick.Time:HH:mm:ss} {tracked.Silo.SiloId} truth {truth.MassKg,10:0} est {estimate.MassKg,10:0} [{estimate.MassLow95Kg,10:0}, {estimate.MassHigh95Kg,10:0}] {estimate.Method} {estimate.Quality} {estimate.QualityReason}"));
                    }
                }
            }
        }

        foreach (var t in silos.Values)
        {
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"{Path.GetFileNameWithoutExtension(scenarioPath),-37} {t.Silo.SiloId,-5} {t.Method,-15} {t.Count,8} {t.RmsPercent,9:F3} {t.MaxPercent,9:F2} {t.CoveragePercent,9:F1}%  {t.QualityMix}"));
        }
    }

    internal static string FindRepositoryRoot()
    {
        var dir = new DirectoryInfo(AppContext.BaseDirectory);
        while (dir is not null && !File.Exists(Path.Combine(dir.FullName, "SiloWatch.sln")))
        {
            dir = dir.Parent;
        }

        return dir?.FullName ?? Directory.GetCurrentDirectory();
    }

    private sealed class SimulatedClock : TimeProvider
    {
        public DateTimeOffset Now { get; set; }

        public override DateTimeOffset GetUtcNow() => Now;
    }

    private sealed class Tracked(SiloRef silo, SiloMonitor monitor, TelemetryDecoder decoder, double capacityKg) : ITelemetryReceiver
    {
        private double _sumSquares;
        private int _covered;
        private readonly int[] _quality = new int[3];

        public SiloRef Silo { get; } = silo;

        public SiloMonitor Monitor { get; } = monitor;

        public TelemetryDecoder Decoder { get; } = decoder;

        public int Count { get; private set; }

        public double MaxPercent { get; private set; }

        public string Method { get; private set; } = "";

        public double RmsPercent => Count == 0 ? double.NaN : Math.Sqrt(_sumSquares / Count) / capacityKg * 100;

        public double CoveragePercent => Count == 0 ? double.NaN : 100.0 * _covered / Count;

        public string QualityMix => Count == 0 ? "" : string.Create(CultureInfo.InvariantCulture,
            $"{100.0 * _quality[0] / Count:F0}/{100.0 * _quality[1] / Count:F0}/{100.0 * _quality[2] / Count:F0}");

        public void Score(InventoryEstimate estimate, double trueMassKg)
        {
            Method = estimate.Method;
            _quality[(int)estimate.Quality]++;
            if (!double.IsFinite(estimate.MassKg))
            {
                return; // no estimate: counted in the quality mix, not in the error
            }

            var error = estimate.MassKg - trueMassKg;
            Count++;
            _sumSquares += error * error;
            MaxPercent = Math.Max(MaxPercent, Math.Abs(error) / capacityKg * 100);
            if (trueMassKg >= estimate.MassLow95Kg && trueMassKg <= estimate.MassHigh95Kg)
            {
                _covered++;
            }
        }

        public void OnSample(in TelemetrySample sample) => Monitor.OnSample(sample);

        public void OnRejected(TelemetryRejection rejection)
        {
        }
    }
}
