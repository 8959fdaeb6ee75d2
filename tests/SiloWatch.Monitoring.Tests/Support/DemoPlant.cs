using Microsoft.Extensions.Time.Testing;
using SiloWatch.Mechanics;
using SiloWatch.Plant;

namespace SiloWatch.Monitoring.Tests.Support;

/// <summary>The invented demo plant (config/plant.demo.json) with its material library, loaded once.</summary>
public static class DemoPlant
{
    private static readonly Lazy<(PlantRegistry Registry, MaterialLibrary Materials)> Loaded = new(() =>
    {
        var dir = Path.Combine(AppContext.BaseDirectory, "config");
        var materials = MaterialLibrary.Load(Path.Combine(dir, "materials.json"));
        var (plant, findings) = PlantLoader.LoadFile(Path.Combine(dir, "plant.demo.json"), materials.Names);
        if (findings.Count > 0)
        {
            throw new InvalidOperationException("demo plant has findings: " + string.Join("; ", findings));
        }

        return (new PlantRegistry(plant), materials);
    });

    public static PlantRegistry Registry => Loaded.Value.Registry;

    public static MaterialLibrary Materials => Loaded.Value.Materials;

    public static SiloRef Silo(string id) =>
        Registry.TryGetSilo("brackenford", id, out var silo) ? silo : throw new ArgumentException($"no demo silo {id}");

    public static SiloModel Model(string id)
    {
        var silo = Silo(id);
        return SiloModel.Create(silo.Options, Materials.Get(silo.Options.Material));
    }

    /// <summary>2026-01-01T00:00Z: a fixed start for fake clocks.</summary>
    public static readonly DateTimeOffset Start = new(2026, 1, 1, 0, 0, 0, TimeSpan.Zero);

    public static (SiloMonitor Monitor, FakeTimeProvider Time, SiloRef Silo, SiloModel Model) Monitor(string id, MonitoringOptions? options = null)
    {
        var silo = Silo(id);
        var model = Model(id);
        var time = new FakeTimeProvider(Start);
        return (new SiloMonitor(silo, model, options ?? new MonitoringOptions(), time), time, silo, model);
    }
}
