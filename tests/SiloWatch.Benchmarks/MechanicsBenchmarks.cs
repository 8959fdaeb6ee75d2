using BenchmarkDotNet.Attributes;
using SiloWatch.Mechanics;
using SiloWatch.Plant;

namespace SiloWatch.Benchmarks;

/// <summary>
/// Cost of the expected readings for a new fill state (per gauge: divide by <see cref="GaugeCount"/>)
/// and of the Janssen inversion, on the demo plant's wheat silo S1 (12 wall gauges, 4 supports).
/// </summary>
[MemoryDiagnoser]
public class MechanicsBenchmarks
{
    private SiloModel _model = null!;
    private SiloModel _floorOnly = null!;
    private double[] _strains = [];
    private double[] _reactions = [];
    private double[] _masses = [];
    private double[] _floorLoads = [];
    private FillState[] _states = [];
    private int _next;

    public int GaugeCount => _model.Gauges.Count;

    [GlobalSetup]
    public void Setup()
    {
        var library = MaterialLibrary.Load(Path.Combine(AppContext.BaseDirectory, "config", "materials.json"));
        var (plant, findings) = PlantLoader.LoadFile(Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json"), library.Names);
        if (findings.Count > 0)
        {
            throw new InvalidOperationException(string.Join("; ", findings));
        }

        var silos = plant.Sites.SelectMany(s => s.Silos).ToList();
        var s1 = silos.Single(s => s.Id == "S1");
        var c1 = silos.Single(s => s.Id == "C1");
        _model = SiloModel.Create(s1, library.Get(s1.Material));
        _floorOnly = SiloModel.Create(c1, library.Get(c1.Material));
        _strains = new double[_model.Gauges.Count];
        _reactions = new double[_model.SupportCount];
        // A spread of fill states so no branch or cache is favoured.
        _masses = [.. Enumerable.Range(1, 256).Select(i => _model.CapacityKg * i / 257.0)];
        _states = [.. _masses.Select(m => _model.StateAtMass(m, FlowMode.Discharging))];
        _floorLoads = [.. Enumerable.Range(1, 256).Select(i => _floorOnly.FloorLoadAtLevelKn(_floorOnly.Geometry.MaxLevelM * i / 257.0))];
    }

    /// <summary>New fill state from a mass, then every gauge's expected strain (12 gauges).</summary>
    [Benchmark]
    public double ExpectedStrainsForANewFillState()
    {
        var state = _model.StateAtMass(_masses[_next++ & 255], FlowMode.Discharging);
        _model.ExpectedStrains(state, _strains);
        return _strains[0];
    }

    /// <summary>Every gauge's expected strain (12 gauges) for a fill state already built: the per-gauge cost alone.</summary>
    [Benchmark]
    public double ExpectedStrainsForAPreparedState()
    {
        _model.ExpectedStrains(_states[_next++ & 255], _strains);
        return _strains[0];
    }

    /// <summary>New fill state, expected loads (floor, friction, weighed) and the 4 support reactions.</summary>
    [Benchmark]
    public double ExpectedLoadsAndReactionsForANewFillState()
    {
        var state = _model.StateAtMass(_masses[_next++ & 255], FlowMode.Filling, 0.4, 120);
        var loads = _model.Expect(state);
        _model.SupportReactionsKn(state, _reactions);
        return loads.WeighedLoadKn + _reactions[0];
    }

    /// <summary>Level and mass from a floor-only load (C1: cement, hopper on cells), with sensitivities.</summary>
    [Benchmark]
    public double InvertFloorLoad() => _floorOnly.InvertFloorLoad(_floorLoads[_next++ & 255]).LevelM;
}
