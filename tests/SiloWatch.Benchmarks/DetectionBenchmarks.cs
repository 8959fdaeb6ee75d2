using System.Diagnostics;
using System.Globalization;
using SiloWatch.Mechanics;
using SiloWatch.Messaging;
using SiloWatch.Monitoring;
using SiloWatch.Monitoring.Alarms;
using SiloWatch.Monitoring.Wall;
using SiloWatch.Plant;
using SiloWatch.Simulator.Materials;
using SiloWatch.Simulator.Model;
using SiloWatch.Simulator.Output;
using SiloWatch.Simulator.Scenarios;

namespace SiloWatch.Benchmarks;

/// <summary>
/// Detection benchmark of the wall-load watch, driven by the plant simulator (simulators/SiloWatch.Simulator):
/// demo silo S1 is simulated with its own physics (slice equations, discharge factors, an eccentric flow channel,
/// wind gusts, the sun with passing clouds, sensor noise); every message goes through the service's decoder and
/// the whole monitoring chain (SiloMonitor → WallWatch → AlarmEngine) once a second of simulated time, and the
/// alarms are scored against the ground-truth CSV the simulator writes beside each run (flow state, flow-channel
/// azimuth, true first-harmonic ratio <c>wall_a1_ratio</c>).
/// <para>
/// Eccentric cases: the true ratio is a multiple of the silo's A1/A0 setpoint (0 = concentric). The flow channel's
/// size is found per run by bisection on the simulator's own truth (radius k·R, centred on the wall) so that
/// the truth reads the target a minute into the discharge. Expected direction of the alarm: opposite the channel
/// (the load rises beside and away from it, DOMAIN.md §4). False-alarm cases: days of concentric discharges and
/// fills, overcast or sunny with passing clouds.
/// </para>
/// Usage: dotnet run -c Release --project tests/SiloWatch.Benchmarks -- detection [runsPerCase] [falseAlarmDays] [multiples, e.g. 0,1.2]
/// </summary>
public static class DetectionDriver
{
    private const string SiloId = "S1";
    private const double ChannelCentreRatio = 1.0;
    private static readonly DateTimeOffset Epoch = new(2026, 6, 1, 0, 0, 0, TimeSpan.Zero);

    public static int Run(string[] args)
    {
        var runs = args.Length > 0 ? int.Parse(args[0], CultureInfo.InvariantCulture) : 100;
        var days = args.Length > 1 ? int.Parse(args[1], CultureInfo.InvariantCulture) : 60;
        double[] multiples = args.Length > 2 ? [.. args[2].Split(',').Select(x => double.Parse(x, CultureInfo.InvariantCulture))] : [0.0, 0.8, 1.2, 2.0];
        var bench = Bench.Load();
        var clock = Stopwatch.StartNew();
        var setpoint = bench.Silo.Options.AlarmLimits.AsymmetryRatioA1;
        Console.WriteLine($"Detection benchmark, silo {bench.Silo.Key} ({bench.Silo.Options.Material}, d {bench.Silo.Options.Geometry.DiameterM} m, h {bench.Silo.Options.Geometry.WallHeightM} m), A1/A0 setpoint {setpoint} (placeholder)");
        Console.WriteLine("Plant simulator (its own physics) → service decoder → SiloMonitor → WallWatch → AlarmEngine, 1 s steps; scored against the simulator's truth CSV.");
        Console.WriteLine("Each run: 15 min idle, then a 10 min discharge at 15-40 kg/s from 60-95 % full; sun in half the runs, passing clouds, gusts, noise.");

        // One installation: the gauges' residual thermal strains are learned over a sunny idle day with passing clouds,
        // and every run starts from that learned state, as a silo in service would.
        var learned = bench.LearnThermal();
        Console.WriteLine($"{"multiple",8} {"target",7} {"truth",7} {"k",5} {"runs",5} {"detected",9} {"median s",9} {"p90 s",7} {"max s",7} {"dir err med",12} {"dir err max",12}");
        var concentricHours = 0.0;
        var concentricFalse = 0;
        foreach (var multiple in multiples)
        {
            var target = multiple * setpoint;
            var times = new List<double>();
            var errors = new List<double>();
            var truths = new List<double>();
            var sizes = new List<double>();
            var detected = 0;
            for (var r = 0; r < runs; r++)
            {
                var result = bench.EccentricRun(target, 1000 + (int)Math.Round(multiple * 100) + (r * 7919), learned);
                truths.Add(result.TrueRatio);
                sizes.Add(result.ChannelRadiusRatio);
                if (multiple == 0)
                {
                    concentricHours += result.SiloHours;
                    if (result.DetectedAfterS is not null)
                    {
                        concentricFalse++;
                        Console.WriteLine($"    false alarm in concentric run {r}: {result.Note}");
                    }
                }

                if (result.DetectedAfterS is { } t)
                {
                    detected++;
                    times.Add(t);
                    errors.Add(result.DirectionErrorDeg);
                }
            }

            times.Sort();
            errors.Sort();
            truths.Sort();
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"{multiple,8:0.0} {target,7:0.000} {Pct(truths, 0.5),7:0.000} {sizes.Average(),5:0.00} {runs,5} {100.0 * detected / runs,8:0.0}% {Pct(times, 0.5),9:0.0} {Pct(times, 0.9),7:0.0} {Pct(times, 1.0),7:0.0} {Pct(errors, 0.5),12:0.0} {Pct(errors, 1.0),12:0.0}"));
        }

        Console.WriteLine("(target: multiple × setpoint; truth: median of the truth CSV's wall_a1_ratio a minute into the discharge; k: mean channel radius ratio)");
        Console.WriteLine();
        Console.WriteLine($"False alarms: {days} days per case, 4 concentric discharges and 2 fills a day, gusts, noise.");
        Console.WriteLine($"{"case",-36} {"silo-h",7} {"disch-h",8} {"wall alarms",12} {"per 1000 h",11} {"other alarms",13} {"max A1/A0",10}");
        var totalHours = concentricHours;
        var totalFalse = concentricFalse;
        foreach (var (name, sunny) in new[] { ("concentric, overcast", false), ("concentric, sun and passing clouds", true) })
        {
            var result = bench.Days(days, sunny, sunny ? 77 : 78, learned);
            totalHours += result.Hours;
            totalFalse += result.WallAlarms;
            Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"{name,-36} {result.Hours,7:0} {result.DischargeHours,8:0.0} {result.WallAlarms,12} {1000.0 * result.WallAlarms / result.Hours,11:0.00} {result.OtherAlarms.Count,13} {result.MaxA1,10:0.000}"));
            foreach (var line in result.OtherAlarms.GroupBy(x => x).Select(g => $"    other: {g.Key} × {g.Count()}"))
            {
                Console.WriteLine(line);
            }
        }

        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"all concentric and thermal cases: {totalFalse} wall-load alarm(s) in {totalHours:0} silo-hours = {1000.0 * totalFalse / totalHours:0.00} per 1000 silo-hours"));
        Console.WriteLine($"elapsed {clock.Elapsed.TotalSeconds:0} s");
        return 0;
    }

    private static double Pct(List<double> sorted, double p) =>
        sorted.Count == 0 ? double.NaN : sorted[Math.Clamp((int)Math.Ceiling(p * sorted.Count) - 1, 0, sorted.Count - 1)];

    internal sealed record RunResult(double? DetectedAfterS, double DirectionErrorDeg, double TrueRatio, double ChannelRadiusRatio, double SiloHours, string Note = "");

    internal sealed record DaysResult(double Hours, double DischargeHours, int WallAlarms, List<string> OtherAlarms, double MaxA1);

    /// <summary>The demo plant reduced to S1, in the simulator's and the service's terms.</summary>
    private sealed class Bench
    {
        private readonly PlantOptions _plant;
        private readonly IReadOnlyDictionary<string, MaterialProperties> _simMaterials;
        private readonly SiloModel _model;
        private readonly string _truthDir;

        private Bench(PlantOptions plant, IReadOnlyDictionary<string, MaterialProperties> simMaterials, SiloRef silo, SiloModel model)
        {
            _plant = plant;
            _simMaterials = simMaterials;
            Silo = silo;
            _model = model;
            _truthDir = Path.Combine(Path.GetTempPath(), $"silowatch-detection-{Environment.ProcessId.ToString(CultureInfo.InvariantCulture)}");
            Directory.CreateDirectory(_truthDir);
        }

        public SiloRef Silo { get; }

        public static Bench Load()
        {
            var dir = Path.Combine(AppContext.BaseDirectory, "config");
            var library = MaterialLibrary.Load(Path.Combine(dir, "materials.json"));
            var simMaterials = MaterialReader.LoadFile(Path.Combine(dir, "materials.json"));
            var (full, findings) = PlantLoader.LoadFile(Path.Combine(dir, "plant.demo.json"), library.Names);
            if (findings.Count > 0)
            {
                throw new InvalidOperationException("demo plant has findings: " + string.Join("; ", findings));
            }

            var site = full.Sites.First(s => s.Silos.Any(x => x.Id == SiloId));
            var plant = new PlantOptions
            {
                Sites = [new SiteOptions { Id = site.Id, Name = site.Name, TimeZone = site.TimeZone, Silos = [site.Silos.First(x => x.Id == SiloId)] }],
            };
            var silo = new PlantRegistry(plant).Silos[0];
            return new Bench(plant, simMaterials, silo, SiloModel.Create(silo.Options, library.Get(silo.Options.Material)));
        }

        /// <summary>A sunny idle day with passing clouds: the wall watch learns each gauge's residual thermal strain.</summary>
        public WallSnapshot LearnThermal()
        {
            var scenario = Scenario(TimeSpan.FromHours(24), Epoch, sunny: true, fillPercent: 80);
            var chain = new Chain(Silo, _model, null);
            Play(scenario, 1, chain, truthPath: null);
            return chain.Watch.Snapshot(chain.NowMs) with { State = DischargeState.Idle, BaselineMassKg = null };
        }

        public RunResult EccentricRun(double targetRatio, int seed, WallSnapshot learned)
        {
            var random = new Random(seed);
            var start = Epoch.AddDays(2 + random.Next(300)).AddHours(random.NextDouble() * 24);
            var sunny = random.NextDouble() < 0.5;
            var fill = 60 + (35 * random.NextDouble());
            var rate = 15 + (25 * random.NextDouble());
            var azimuth = Math.Round(360 * random.NextDouble(), 1);
            var k = targetRatio > 0 ? ChannelSizeFor(targetRatio, fill, rate, start) : 0;
            var scenario = Scenario(TimeSpan.FromMinutes(25), start, sunny, fill);
            scenario.Events.Add(new ScenarioEvent
            {
                At = TimeSpan.FromMinutes(15),
                Type = ScenarioEventType.Discharge,
                Silo = SiloId,
                RateKgPerS = rate,
                ChannelAzimuthDeg = targetRatio > 0 ? azimuth : null,
                ChannelRadiusRatio = k,
                ChannelEccentricityRatio = ChannelCentreRatio,
                Note = "benchmark discharge",
            });

            var chain = new Chain(Silo, _model, learned);
            var truthPath = Path.Combine(_truthDir, $"run-{seed.ToString(CultureInfo.InvariantCulture)}.csv");
            Play(scenario, seed, chain, truthPath);
            var truth = TruthFile.Read(truthPath);
            File.Delete(truthPath);

            var onset = truth.First(t => t.Flow == "discharging").Time;
            var trueRatio = truth.Where(t => t.Flow == "discharging" && t.Time >= onset.AddSeconds(50) && t.Time <= onset.AddSeconds(70)).Select(t => t.WallA1Ratio).DefaultIfEmpty(0).Average();
            var channel = truth.FirstOrDefault(t => t.ChannelAzimuthDeg is not null)?.ChannelAzimuthDeg;
            var hours = (truth[^1].Time - truth[0].Time).TotalHours;
            var first = chain.Detections.FirstOrDefault(d => d.TimestampMs >= onset.ToUnixTimeMilliseconds());
            if (first is null)
            {
                return new RunResult(null, double.NaN, trueRatio, k, hours);
            }

            // The load rises beside and away from the flow channel: the alarm's direction should be the channel's + 180°.
            var error = channel is { } c ? AngleBetween(first.DirectionDeg, c + 180) : double.NaN;
            var after = (first.TimestampMs - onset.ToUnixTimeMilliseconds()) / 1000.0;
            return new RunResult(after, error, trueRatio, k, hours,
                string.Create(CultureInfo.InvariantCulture, $"{first.AlarmId} {after:0} s after onset, value {first.Value:0.000}, toward {first.DirectionDeg:0}°, sun {sunny}, fill {fill:0} %"));
        }

        /// <summary>Days of ordinary operation at S1: concentric discharges and fills; every wall-load alarm is false.</summary>
        public DaysResult Days(int days, bool sunny, int seed, WallSnapshot learned)
        {
            var random = new Random(seed);
            var scenario = Scenario(TimeSpan.FromDays(days), Epoch.AddDays(1), sunny, fillPercent: 70);
            var capacityKg = _model.CapacityKg;
            var massKg = 0.7 * capacityKg;
            var dischargeHours = 0.0;
            for (var d = 0; d < days; d++)
            {
                (double StartH, double Rate, double Minutes)[] plan =
                [
                    (2 + random.NextDouble(), 25, 0),
                    (7 + (2 * random.NextDouble()), -(15 + (25 * random.NextDouble())), 15 + (10 * random.NextDouble())),
                    (10 + (2 * random.NextDouble()), -(15 + (25 * random.NextDouble())), 15 + (10 * random.NextDouble())),
                    (13 + (2 * random.NextDouble()), 25, 0),
                    (16 + (2 * random.NextDouble()), -(15 + (25 * random.NextDouble())), 15 + (10 * random.NextDouble())),
                    (19 + (2 * random.NextDouble()), -(15 + (25 * random.NextDouble())), 15 + (10 * random.NextDouble())),
                ];
                foreach (var (startH, rate, minutes) in plan)
                {
                    var at = TimeSpan.FromDays(d) + TimeSpan.FromHours(startH);
                    if (rate > 0)
                    {
                        var kg = Math.Max(0, (0.9 * capacityKg) - massKg);
                        scenario.Events.Add(new ScenarioEvent { At = at, Type = ScenarioEventType.Delivery, Silo = SiloId, MassKg = kg, RateKgPerS = rate, Note = "benchmark fill" });
                        massKg += kg;
                    }
                    else
                    {
                        var kg = Math.Min(minutes * 60 * -rate, Math.Max(0, massKg - (0.15 * capacityKg)));
                        scenario.Events.Add(new ScenarioEvent { At = at, Type = ScenarioEventType.Discharge, Silo = SiloId, MassKg = kg, RateKgPerS = -rate, Note = "benchmark concentric discharge" });
                        massKg -= kg;
                        dischargeHours += kg / -rate / 3600;
                    }
                }
            }

            var chain = new Chain(Silo, _model, learned) { AcknowledgeDaily = true };
            Play(scenario, seed, chain, truthPath: null);
            var wall = chain.Activations.Count(t => IsWallLoad(t.Condition));
            var others = chain.Activations.Where(t => !IsWallLoad(t.Condition)).Select(t => t.AlarmId).ToList();
            return new DaysResult(days * 24.0, dischargeHours, wall, others, chain.MaxA1WhileDischarging);
        }

        private static bool IsWallLoad(string condition) =>
            condition.Contains("/asymmetry-", StringComparison.Ordinal) || condition.Contains("/excess/", StringComparison.Ordinal);

        /// <summary>
        /// Radius ratio k of a flow channel (centred on the wall) whose truth ratio a minute into the discharge is
        /// <paramref name="target"/>: bisection on the simulator's own truth, still air, no sun, no noise.
        /// </summary>
        private double ChannelSizeFor(double target, double fillPercent, double rate, DateTimeOffset start)
        {
            double lo = 0.15, hi = 1.0;
            for (var i = 0; i < 12; i++)
            {
                var k = 0.5 * (lo + hi);
                var scenario = Scenario(TimeSpan.FromSeconds(75), start, sunny: false, fillPercent);
                scenario.Weather.WindMeanMs = 0;
                scenario.Weather.GustsPerHour = 0;
                scenario.Weather.PassingCloudsPerHour = 0;
                scenario.Events.Add(new ScenarioEvent
                {
                    At = TimeSpan.FromSeconds(10),
                    Type = ScenarioEventType.Discharge,
                    Silo = SiloId,
                    RateKgPerS = rate,
                    ChannelAzimuthDeg = 0,
                    ChannelRadiusRatio = k,
                    ChannelEccentricityRatio = ChannelCentreRatio,
                });
                var model = new PlantModel(_plant, _simMaterials, scenario, 1, start);
                var ratio = 0.0;
                foreach (var tick in model.Run())
                {
                    foreach (var row in tick.Truth)
                    {
                        ratio = row.WallA1Ratio;
                    }
                }

                if (ratio < target)
                {
                    lo = k;
                }
                else
                {
                    hi = k;
                }
            }

            return 0.5 * (lo + hi);
        }

        private static Scenario Scenario(TimeSpan duration, DateTimeOffset start, bool sunny, double fillPercent) => new()
        {
            Name = "detection-benchmark",
            Start = start,
            Duration = duration,
            TruthInterval = TimeSpan.FromSeconds(5),
            Weather = new WeatherSettings
            {
                AirMeanC = 16,
                AirSwingC = 6,
                SunriseHour = 5,
                SunsetHour = 21,
                SunWarmingK = sunny ? 15 : 0,
                Cloudiness = sunny ? 0 : 1,
                PassingCloudsPerHour = sunny ? 3 : 0,
                WindMeanMs = 4,
                WindFromDeg = 240,
                GustsPerHour = 6,
                GustMs = 10,
            },
            Silos = [new SiloSetup { Silo = SiloId, InitialFillPercent = fillPercent }],
        };

        private void Play(Scenario scenario, int seed, Chain chain, string? truthPath)
        {
            var model = new PlantModel(_plant, _simMaterials, scenario, seed, scenario.Start!.Value);
            using var truth = truthPath is null ? null : TruthCsvWriter.Create(truthPath);
            var next = DateTimeOffset.MinValue;
            foreach (var tick in model.Run())
            {
                chain.Clock.Now = tick.Time;
                var nowMs = tick.Time.ToUnixTimeMilliseconds();
                foreach (var m in tick.Messages)
                {
                    chain.Decoder.Decode(m.Message.ToPayload(), nowMs, chain);
                }

                foreach (var row in tick.Truth)
                {
                    truth?.Write(row);
                }

                if (tick.Time >= next)
                {
                    next = tick.Time.AddSeconds(1);
                    chain.Evaluate(nowMs);
                }
            }
        }
    }

    private static double AngleBetween(double a, double b)
    {
        var d = Math.Abs((((a - b) % 360) + 360) % 360);
        return Math.Min(d, 360 - d);
    }

    internal sealed record Detection(long TimestampMs, string AlarmId, double Value, double DirectionDeg);

    /// <summary>The service's monitoring chain for one silo on a simulated clock.</summary>
    private sealed class Chain : ITelemetryReceiver
    {
        private long _lastDay = long.MinValue;

        public Chain(SiloRef silo, SiloModel model, WallSnapshot? learned)
        {
            Monitor = new SiloMonitor(silo, model, new MonitoringOptions(), Clock);
            Watch = new WallWatch(silo, model, new WallWatchOptions());
            Engine = new AlarmEngine(AlarmDefinitions.ForSilo(silo, model), Clock);
            Decoder = new TelemetryDecoder(silo, new TelemetryDecoderOptions { MaxLateness = TimeSpan.Zero, MaxFutureSkew = TimeSpan.FromDays(3650) });
            if (learned is not null)
            {
                Watch.Restore(learned);
            }
        }

        public SimClock Clock { get; } = new();

        public SiloMonitor Monitor { get; }

        public WallWatch Watch { get; }

        public AlarmEngine Engine { get; }

        public TelemetryDecoder Decoder { get; }

        public bool AcknowledgeDaily { get; init; }

        public long NowMs => Clock.Now.ToUnixTimeMilliseconds();

        public List<AlarmTransition> Activations { get; } = [];

        public List<Detection> Detections { get; } = [];

        public double MaxA1WhileDischarging { get; private set; }

        public void OnSample(in TelemetrySample sample) => Monitor.OnSample(sample);

        public void OnRejected(TelemetryRejection rejection)
        {
        }

        public void Evaluate(long nowMs)
        {
            var inventory = Monitor.Evaluate(nowMs);
            Watch.Update(Monitor.Readings);
            var assessment = Watch.Evaluate(nowMs, inventory);
            if (assessment.State == DischargeState.Discharging)
            {
                foreach (var r in assessment.Rings)
                {
                    if (double.IsFinite(r.A1Ratio))
                    {
                        MaxA1WhileDischarging = Math.Max(MaxA1WhileDischarging, r.A1Ratio);
                    }
                }
            }

            foreach (var t in Engine.Evaluate(assessment.Conditions))
            {
                if (t.To != AlarmStateName.Unacknowledged || t.From == AlarmStateName.Shelved)
                {
                    continue;
                }

                Activations.Add(t);
                if (t.Condition.Contains("/asymmetry-a1/", StringComparison.Ordinal))
                {
                    var ring = t.Condition[(t.Condition.LastIndexOf('/') + 1)..];
                    var direction = assessment.Rings.FirstOrDefault(r => r.Ring == ring)?.AsymmetryDirectionDeg ?? double.NaN;
                    Detections.Add(new Detection(t.TimestampMs, t.AlarmId, t.Value ?? double.NaN, direction));
                }
            }

            var day = nowMs / 86_400_000;
            if (AcknowledgeDaily && day != _lastDay)
            {
                _lastDay = day;
                foreach (var a in Engine.Active.Where(a => a.State is AlarmStateName.Latched or AlarmStateName.ReturnedToNormalUnacknowledged or AlarmStateName.Acknowledged or AlarmStateName.Unacknowledged))
                {
                    // The operator acknowledges and resets what the day left standing.
                    Engine.Acknowledge(a.AlarmId, "bench");
                    Engine.Reset(a.AlarmId, "bench");
                }
            }
        }
    }

    /// <summary>A fake clock the whole chain shares.</summary>
    private sealed class SimClock : TimeProvider
    {
        public DateTimeOffset Now { get; set; } = Epoch;

        public override DateTimeOffset GetUtcNow() => Now;
    }

    internal sealed record TruthLine(DateTimeOffset Time, string Flow, double? ChannelAzimuthDeg, double WallA1Ratio);

    /// <summary>Reads the simulator's ground-truth CSV back (the columns this benchmark scores against).</summary>
    private static class TruthFile
    {
        public static List<TruthLine> Read(string path)
        {
            var lines = File.ReadAllLines(path);
            var header = lines[0].Split(',');
            int Col(string name) => Array.IndexOf(header, name) is var i and >= 0 ? i : throw new InvalidDataException($"truth CSV has no column '{name}'");
            int time = Col("time"), silo = Col("silo"), flow = Col("flow"), channel = Col("channel_azimuth_deg"), ratio = Col("wall_a1_ratio");
            var rows = new List<TruthLine>();
            foreach (var line in lines.Skip(1))
            {
                var f = line.Split(',');
                if (f[silo] != SiloId)
                {
                    continue;
                }

                rows.Add(new TruthLine(
                    DateTimeOffset.Parse(f[time], CultureInfo.InvariantCulture),
                    f[flow],
                    f[channel].Length > 0 ? double.Parse(f[channel], CultureInfo.InvariantCulture) : null,
                    double.Parse(f[ratio], CultureInfo.InvariantCulture)));
            }

            return rows;
        }
    }
}
