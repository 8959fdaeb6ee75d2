using Microsoft.Extensions.Options;
using SiloWatch.Service.Hosting;
using SiloWatch.Simulator;

namespace SiloWatch.Service.Demo;

/// <summary>The demo: which scenario the in-process simulator plays. Section <see cref="SectionName"/>.</summary>
public sealed class DemoOptions
{
    public const string SectionName = "Demo";

    /// <summary>Run the plant simulator in-process. Default false; the shipped appsettings.json turns it on for the demo.</summary>
    public bool RunSimulator { get; set; }

    /// <summary>Scenario file. Default simulators/scenarios/demo.json.</summary>
    public string Scenario { get; set; } = "simulators/scenarios/demo.json";

    /// <summary>Seed of the simulator's random numbers. Default 1.</summary>
    public int Seed { get; set; } = 1;
}

/// <summary>Plays the demo scenario into the broker at real time, looping, while the service runs.</summary>
public sealed class DemoSimulatorService(IOptions<DemoOptions> demo, IOptions<InstanceOptions> instance,
    BrokerEndpoint endpoint, IHostEnvironment env, ILogger<DemoSimulatorService> logger) : BackgroundService
{
    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        if (!demo.Value.RunSimulator)
        {
            return;
        }

        try
        {
            var (host, port) = await endpoint.WhenReadyAsync(stoppingToken).ConfigureAwait(false);
            var scenario = ResolveScenario(demo.Value.Scenario);
            logger.LogInformation("Demo: simulating the invented demo plant from {Scenario} into {Host}:{Port}", scenario, host, port);
            await SimulatorRunner.RunAsync(new SimulatorRunOptions
            {
                PlantPath = env.ResolvePath(instance.Value.PlantFile),
                MaterialsPath = env.ResolvePath(instance.Value.MaterialsFile),
                ScenarioPath = scenario,
                BrokerHost = host,
                BrokerPort = port,
                Speed = 1,
                Seed = demo.Value.Seed,
                Loop = true,
            }, progress: null, stoppingToken).ConfigureAwait(false);
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
            // normal stop
        }
        catch (Exception ex)
        {
            // The demo feed failing must not take the service down.
            logger.LogError(ex, "Demo simulator stopped");
        }
    }

    private string ResolveScenario(string path)
    {
        var resolved = env.ResolvePath(path);
        if (File.Exists(resolved))
        {
            return resolved;
        }

        // simulators/ copies its scenarios beside its own output as scenarios/.
        var beside = Path.Combine(AppContext.BaseDirectory, "scenarios", Path.GetFileName(path));
        return File.Exists(beside) ? beside : resolved;
    }
}
