using Microsoft.Extensions.Time.Testing;
using SiloWatch.Mechanics;
using SiloWatch.Monitoring.Alarms;
using SiloWatch.Monitoring.Tests.Support;
using SiloWatch.Monitoring.Wall;
using SiloWatch.Plant;

namespace SiloWatch.Monitoring.Tests.Wall.Support;

/// <summary>
/// Drives a <see cref="WallWatch"/> and an <see cref="AlarmEngine"/> for a demo silo once a second with
/// invented gauge strains: the Mechanics expectation for the present mass and flow, plus an optional
/// discharge asymmetry (first harmonic of the load, ramped in over 10 s), one-sided solar heating of
/// the gauges with a residual thermal strain the gauges' own compensation misses, and seeded noise.
/// The inventory estimate is exact (its rate interval ±0.5 kg/s).
/// </summary>
public sealed class WallScenario
{
    private readonly double[] _expected;
    private readonly Random _random;

    public WallScenario(string siloId = "S1", WallWatchOptions? options = null, int seed = 7)
    {
        Silo = DemoPlant.Silo(siloId);
        Model = DemoPlant.Model(siloId);
        Time = new FakeTimeProvider(DemoPlant.Start);
        Options = options ?? new WallWatchOptions();
        Watch = new WallWatch(Silo, Model, Options);
        Engine = new AlarmEngine(AlarmDefinitions.ForSilo(Silo, Model), Time);
        _expected = new double[Model.Gauges.Count];
        _random = new Random(seed);
        MassKg = 0.8 * Model.CapacityKg;
    }

    public SiloRef Silo { get; }

    public SiloModel Model { get; }

    public FakeTimeProvider Time { get; }

    public WallWatchOptions Options { get; }

    public WallWatch Watch { get; }

    public AlarmEngine Engine { get; }

    public double MassKg { get; set; }

    /// <summary>Negative while discharging, kg/s.</summary>
    public double RateKgPerS { get; set; }

    /// <summary>True first-harmonic ratio of the discharge's load change over the expected mean load.</summary>
    public double AsymmetryRatio { get; set; }

    /// <summary>Where the wall load rises most, degrees from the reference mark.</summary>
    public double AsymmetryDirectionDeg { get; set; }

    public double AirTemperatureC { get; set; } = 15;

    /// <summary>Peak extra temperature of the sunlit side, K.</summary>
    public double SunExcessK { get; set; }

    public double SunAzimuthDeg { get; set; } = 90;

    /// <summary>Residual apparent strain per K of every gauge left by its compensation, microstrain/K (unknown to the watch).</summary>
    public double ResidualMicroPerK { get; set; } = 3;

    public double NoiseMicro { get; set; } = 0.3;

    public HashSet<string> BadSensors { get; } = new(StringComparer.Ordinal);

    /// <summary>Gauges reported uncertain (e.g. their paired temperature is missing) and offset by this many microstrain.</summary>
    public Dictionary<string, double> UncertainSensors { get; } = new(StringComparer.Ordinal);

    public List<AlarmTransition> Transitions { get; } = [];

    public List<WallAssessment> Assessments { get; } = [];

    public WallAssessment? Last => Assessments.Count == 0 ? null : Assessments[^1];

    private long _dischargeStartMs = long.MinValue;

    public long NowMs => Time.GetUtcNow().ToUnixTimeMilliseconds();

    /// <summary>Runs <paramref name="seconds"/> seconds; <paramref name="each"/> may change the scenario before each second.</summary>
    public void Run(int seconds, Action<int>? each = null)
    {
        for (var i = 0; i < seconds; i++)
        {
            each?.Invoke(i);
            Step();
        }
    }

    private void Step()
    {
        Time.Advance(TimeSpan.FromSeconds(1));
        var now = NowMs;
        MassKg = Math.Max(0, MassKg + RateKgPerS);
        var discharging = RateKgPerS < 0;
        if (discharging && _dischargeStartMs == long.MinValue)
        {
            _dischargeStartMs = now;
        }
        else if (!discharging)
        {
            _dischargeStartMs = long.MinValue;
        }

        var state = Model.StateAtMass(MassKg, discharging ? FlowMode.Discharging : FlowMode.Filling);
        Model.ExpectedStrains(state, _expected);
        var ramp = discharging ? Math.Min(1.0, (now - _dischargeStartMs) / 10_000.0) : 0;
        foreach (var ring in Model.Gauges.GroupBy(g => g.Ring))
        {
            var sign = ring.First().Kind == SensorKind.AxialStrain ? -1.0 : 1.0;
            var meanLoad = Math.Abs(ring.Average(g => _expected[g.Index]));
            foreach (var g in ring)
            {
                var sensor = Silo.Options.Sensors[g.SensorIndex];
                var temperature = AirTemperatureC + (SunExcessK * Math.Max(0, Math.Cos((g.AngleDeg - SunAzimuthDeg) * Math.PI / 180)));
                var strain = _expected[g.Index]
                    + (sign * ramp * AsymmetryRatio * meanLoad * Math.Cos((g.AngleDeg - AsymmetryDirectionDeg) * Math.PI / 180))
                    + (ResidualMicroPerK * (temperature - 20))
                    + (NoiseMicro * Gaussian());
                var quality = BadSensors.Contains(sensor.Id) ? Quality.Bad : UncertainSensors.ContainsKey(sensor.Id) ? Quality.Uncertain : Quality.Good;
                Watch.OnGauge(g.SensorIndex, now, strain + UncertainSensors.GetValueOrDefault(sensor.Id), temperature, quality);
            }
        }

        foreach (var s in Silo.Sensors.Where(s => s.Options.Kind is SensorKind.LoadCell or SensorKind.Temperature))
        {
            var value = s.Options.Kind == SensorKind.LoadCell
                ? Units.MassKgToWeightKn(MassKg + Silo.Options.Weighing.StructureMassKg) / Silo.Options.Weighing.SupportCount
                : AirTemperatureC;
            Watch.OnValue(s.Index, now, value, BadSensors.Contains(s.Id) ? Quality.Bad : Quality.Good);
        }

        var inventory = Inventory.At(now, MassKg, RateKgPerS, 0.5, 100 * Model.StateAtMass(MassKg).VolumeM3 / Model.CapacityM3);
        var assessment = Watch.Evaluate(now, inventory);
        Assessments.Add(assessment);
        Transitions.AddRange(Engine.Evaluate(assessment.Conditions));
    }

    public RingAssessment Ring(string id) => Last!.Rings.Single(r => r.Ring == id);

    public IEnumerable<AlarmTransition> Raised(string namePart) =>
        Transitions.Where(t => t.To == AlarmStateName.Unacknowledged && t.AlarmId.Contains(namePart, StringComparison.Ordinal));

    private double Gaussian()
    {
        var u1 = 1.0 - _random.NextDouble();
        var u2 = _random.NextDouble();
        return Math.Sqrt(-2 * Math.Log(u1)) * Math.Cos(2 * Math.PI * u2);
    }
}
