using SiloWatch.Simulator;

namespace SiloWatch.Integration.Tests.Support;

/// <summary>The plant simulator playing a scenario into a test broker in the background, accelerated; disposing stops it.</summary>
public sealed class SimulatedPlant : IAsyncDisposable
{
    private readonly CancellationTokenSource _stop = new();

    public Task<SimulationSummary> Run { get; private set; } = Task.FromResult<SimulationSummary>(null!);

    public static SimulatedPlant Start(int brokerPort, string scenario, double speed, string? plantPath = null, int seed = 7)
    {
        var plant = new SimulatedPlant();
        var options = new SimulatorRunOptions
        {
            PlantPath = plantPath ?? Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json"),
            MaterialsPath = Path.Combine(AppContext.BaseDirectory, "config", "materials.json"),
            ScenarioPath = Path.Combine(AppContext.BaseDirectory, "scenarios", scenario),
            BrokerHost = "127.0.0.1",
            BrokerPort = brokerPort,
            Speed = speed,
            Seed = seed,
            ClientId = $"sim-{scenario}-{Guid.NewGuid():N}"[..40],
        };
        var token = plant._stop.Token;
        plant.Run = Task.Run(() => SimulatorRunner.RunAsync(options, progress: null, token), CancellationToken.None);
        return plant;
    }

    /// <summary>
    /// A copy of the demo plant with some silos' alarm limits changed (e.g. a low overfill limit, so a
    /// test raises a real alarm from real data); returns its path.
    /// </summary>
    public static string PlantWithLimits(params (string SiloId, string Limit, double Value)[] changes) => DemoPlantCopy.WithLimits(changes);

    public async ValueTask DisposeAsync()
    {
        await _stop.CancelAsync();
        try
        {
            await Run;
        }
        catch (OperationCanceledException)
        {
        }

        _stop.Dispose();
    }
}
