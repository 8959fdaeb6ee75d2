using SiloWatch.Plant;
using SiloWatch.Simulator.Materials;
using SiloWatch.Simulator.Model;
using SiloWatch.Simulator.Scenarios;

namespace SiloWatch.Simulator.Tests.Support;

/// <summary>The invented demo plant, the material library and the scenario files, found from the test's output folder.</summary>
public static class TestPlant
{
    private static readonly Lazy<string> Root = new(() =>
    {
        var dir = new DirectoryInfo(AppContext.BaseDirectory);
        while (dir is not null && !File.Exists(Path.Combine(dir.FullName, "SiloWatch.sln")))
        {
            dir = dir.Parent;
        }

        return dir?.FullName ?? throw new InvalidOperationException("repository root (SiloWatch.sln) not found above " + AppContext.BaseDirectory);
    });

    public static string RepoRoot => Root.Value;

    public static string PlantPath => Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json");

    public static string MaterialsPath => Path.Combine(AppContext.BaseDirectory, "config", "materials.json");

    public static string ScenarioPath(string name) => Path.Combine(RepoRoot, "simulators", "scenarios", name + ".json");

    public static IReadOnlyDictionary<string, MaterialProperties> Materials => MaterialReader.LoadFile(MaterialsPath);

    public static PlantOptions Plant
    {
        get
        {
            var (plant, findings) = PlantLoader.LoadFile(PlantPath);
            Assert.Empty(findings);
            return plant;
        }
    }

    public static SiloOptions Silo(string id) => Plant.Sites.Single().Silos.Single(s => s.Id == id);

    public static PlantModel Model(Scenario scenario, int seed = 1, DateTimeOffset? start = null) =>
        new(Plant, Materials, scenario, seed, start ?? scenario.Start ?? new DateTimeOffset(2026, 6, 21, 0, 0, 0, TimeSpan.Zero));
}

/// <summary>Builds small scenarios in code, quiet by default (no gusts, no network faults).</summary>
public sealed class ScenarioBuilder
{
    private readonly Scenario _s = new()
    {
        Name = "test",
        Start = new DateTimeOffset(2026, 3, 10, 22, 0, 0, TimeSpan.Zero),
        Duration = TimeSpan.FromMinutes(10),
        Weather = new WeatherSettings { GustsPerHour = 0, GustMs = 0, WindMeanMs = 0, SunWarmingK = 10, Cloudiness = 0 },
    };

    public ScenarioBuilder StartingAt(DateTimeOffset start)
    {
        _s.Start = start;
        return this;
    }

    public ScenarioBuilder Lasting(TimeSpan duration)
    {
        _s.Duration = duration;
        return this;
    }

    public ScenarioBuilder WithFill(string silo, double percent)
    {
        _s.Silos.Add(new SiloSetup { Silo = silo, InitialFillPercent = percent });
        return this;
    }

    public ScenarioBuilder WithNoise(double strainMicro, double loadCellMvPerV = 0.00005, double temperatureK = 0.05)
    {
        _s.Noise = new NoiseSettings { StrainMicro = strainMicro, LoadCellMvPerV = loadCellMvPerV, TemperatureK = temperatureK, LoadCellZeroDriftMvPerVPerSqrtDay = 0, FlowRateJitter = 0.05 };
        return this;
    }

    public ScenarioBuilder WithWeather(Action<WeatherSettings> change)
    {
        change(_s.Weather);
        return this;
    }

    public ScenarioBuilder WithNetwork(double duplicate, double reorder)
    {
        _s.Network = new NetworkSettings { DuplicateProbability = duplicate, ReorderProbability = reorder };
        return this;
    }

    public ScenarioBuilder With(ScenarioEvent e)
    {
        _s.Events.Add(e);
        return this;
    }

    public Scenario Build() => _s;
}
