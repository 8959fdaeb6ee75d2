using SiloWatch.Mechanics;
using SiloWatch.Plant;

namespace SiloWatch.Monitoring.Tests.Support;

/// <summary>
/// Builds the samples a silo's sensors would send for a known contents mass, from the mechanics
/// model (support reactions, floor load, expected wall strain) and the inverse conversions.
/// Invented signals for tests only; seeded noise.
/// </summary>
public sealed class SignalSource(SiloRef silo, SiloModel model, int seed = 1)
{
    private readonly Random _random = new(seed);
    private readonly double[] _reactions = new double[Math.Max(1, silo.Options.Weighing.SupportCount)];
    private readonly double[] _strains = new double[model.Gauges.Count];

    /// <summary>σ of the white noise added to every bridge signal, mV/V. Default 0.00005.</summary>
    public double NoiseMvPerV { get; set; } = 5e-5;

    public double TemperatureC { get; set; } = 20;

    /// <summary>Offset of the contents' centre of gravity, m, and its azimuth, degrees.</summary>
    public double EccentricityM { get; set; }

    public double EccentricityAzimuthDeg { get; set; }

    /// <summary>Extra signal added to one sensor (by id), mV/V: drift or offset faults.</summary>
    public Dictionary<string, double> OffsetMvPerV { get; } = new(StringComparer.Ordinal);

    /// <summary>Sensors frozen at a value (mV/V or degC): a stuck converter or gateway.</summary>
    public Dictionary<string, double> Frozen { get; } = new(StringComparer.Ordinal);

    /// <summary>Sensors that send nothing.</summary>
    public HashSet<string> Silent { get; } = new(StringComparer.Ordinal);

    /// <summary>One sample per sensor at a time for a contents mass.</summary>
    public IEnumerable<TelemetrySample> Scan(double massKg, long timestampMs)
    {
        var state = model.StateAtMass(massKg, FlowMode.Filling, EccentricityM, EccentricityAzimuthDeg);
        var loads = model.Expect(state);
        var weighing = silo.Options.Weighing;
        if (weighing.SupportCount >= 3)
        {
            model.SupportReactionsKn(state, _reactions);
        }

        model.ExpectedStrains(state, _strains);
        var cells = silo.Sensors.Count(s => s.Options.Kind == SensorKind.LoadCell);
        foreach (var s in silo.Sensors)
        {
            if (Silent.Contains(s.Id))
            {
                continue;
            }

            var o = s.Options;
            double value;
            switch (o.Kind)
            {
                case SensorKind.LoadCell:
                    // The structure is shared by all supports (PlantOptions: StructureMassKg); floor cells carry the floor's own.
                    var structure = Units.MassKgToWeightKn(weighing.StructureMassKg) /
                        (weighing.Arrangement == WeighingArrangement.FloorOnly ? cells : Math.Max(1, weighing.SupportCount));
                    var contents = weighing.Arrangement == WeighingArrangement.FloorOnly
                        ? loads.FloorLoadKn / cells
                        : _reactions[o.Support - 1];
                    value = LoadCellConversion.SignalMvPerV(structure + contents, o, TemperatureC);
                    break;
                case SensorKind.AxialStrain or SensorKind.HoopStrain:
                    var gauge = model.Gauges.First(g => g.SensorIndex == s.Index);
                    var micro = double.IsNaN(_strains[gauge.Index]) ? 0 : _strains[gauge.Index];
                    if (o.Kind == SensorKind.AxialStrain && EccentricityM != 0)
                    {
                        // Thin shell under N and M = N·e: n(θ) = n0·[1 + 2(e/r)·cos(θ − θ_e)] [D].
                        var r = 0.5 * silo.Options.Geometry.DiameterM;
                        micro *= 1 + (2 * EccentricityM / r * Math.Cos((o.AngleDeg - EccentricityAzimuthDeg) * Math.PI / 180));
                    }

                    micro += o.ThermalOutputMicroPerK * (TemperatureC - o.ReferenceTemperatureC);
                    value = BridgeEquations.MvPerVFromStrainMicro(o.Bridge, micro, o.GaugeFactor, silo.Options.Geometry.WallPoissonRatio);
                    break;
                default:
                    yield return new TelemetrySample(silo.Index, s.Index, timestampMs, TemperatureC + (0.05 * Gaussian()));
                    continue;
            }

            value += NoiseMvPerV * Gaussian();
            if (Frozen.TryGetValue(s.Id, out var frozen))
            {
                value = frozen;
            }

            if (OffsetMvPerV.TryGetValue(s.Id, out var offset))
            {
                value += offset;
            }

            yield return new TelemetrySample(silo.Index, s.Index, timestampMs, value);
        }
    }

    /// <summary>Feeds scans once a second from <paramref name="startMs"/> for <paramref name="seconds"/>, mass given per second.</summary>
    public long Run(SiloMonitor monitor, long startMs, int seconds, Func<int, double> massAt)
    {
        var t = startMs;
        for (var i = 0; i < seconds; i++)
        {
            t = startMs + (i * 1000L);
            foreach (var sample in Scan(massAt(i), t))
            {
                monitor.OnSample(sample);
            }
        }

        return t;
    }

    /// <summary>The samples of <paramref name="seconds"/> scans once a second at a steady mass, built before use.</summary>
    public TelemetrySample[] Samples(double massKg, long startMs, int seconds) =>
        [.. Enumerable.Range(0, seconds).SelectMany(i => Scan(massKg, startMs + (i * 1000L)))];

    private double Gaussian()
    {
        var u1 = 1.0 - _random.NextDouble();
        var u2 = _random.NextDouble();
        return Math.Sqrt(-2.0 * Math.Log(u1)) * Math.Cos(2.0 * Math.PI * u2);
    }
}
