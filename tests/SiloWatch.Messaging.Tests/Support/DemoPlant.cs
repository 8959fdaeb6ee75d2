using SiloWatch.Plant;

namespace SiloWatch.Messaging.Tests.Support;

/// <summary>The invented demo plant (config/plant.demo.json, copied to the test output), loaded once.</summary>
public static class DemoPlant
{
    private static readonly Lazy<PlantRegistry> LazyRegistry = new(() =>
    {
        var path = Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json");
        var (plant, findings) = PlantLoader.LoadFile(path);
        if (findings.Count > 0)
        {
            throw new InvalidOperationException("demo plant has findings: " + string.Join("; ", findings));
        }

        return new PlantRegistry(plant);
    });

    public static PlantRegistry Registry => LazyRegistry.Value;

    /// <summary>brackenford/S1: load cells LC1..LC4 (mV/V, -0.5..3.2), strain gauges, temperatures T-R1-*.</summary>
    public static SiloRef S1 => Registry.TryGetSilo("brackenford", "S1", out var silo) ? silo : throw new InvalidOperationException("S1 missing");

    /// <summary>2026-12-01T10:15:03Z, one second after the contract examples' 10:15:02.250Z.</summary>
    public static readonly DateTimeOffset Now = new(2026, 12, 1, 10, 15, 3, TimeSpan.Zero);

    public static long NowMs => Now.ToUnixTimeMilliseconds();
}
