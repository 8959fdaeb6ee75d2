namespace SiloWatch.Simulator;

/// <summary>How to run a scenario (from the command line, or in-process by the service's demo mode).</summary>
public sealed class SimulatorRunOptions
{
    /// <summary>Plant definition (JSON with a top-level "Plant" object). Default config/plant.demo.json beside the program.</summary>
    public string PlantPath { get; set; } = Path.Combine(AppContext.BaseDirectory, "config", "plant.demo.json");

    /// <summary>Material library. Default config/materials.json beside the program.</summary>
    public string MaterialsPath { get; set; } = Path.Combine(AppContext.BaseDirectory, "config", "materials.json");

    /// <summary>Scenario file (simulators/scenarios/*.json). Default scenarios/demo.json beside the program.</summary>
    public string ScenarioPath { get; set; } = Path.Combine(AppContext.BaseDirectory, "scenarios", "demo.json");

    public string BrokerHost { get; set; } = "127.0.0.1";

    public int BrokerPort { get; set; } = 1883;

    public string? Username { get; set; }

    public string? Password { get; set; }

    /// <summary>MQTT topic prefix. Default "silowatch".</summary>
    public string TopicPrefix { get; set; } = "silowatch";

    /// <summary>Time acceleration, 1..1000. At 1 the timestamps follow the wall clock; above 1 they are simulated time from <see cref="StartTime"/>.</summary>
    public double Speed { get; set; } = 1;

    /// <summary>Seed of every random number of the run: the same seed gives the same messages.</summary>
    public int Seed { get; set; }

    /// <summary>
    /// Start of simulated time. Default: now at ×1; above ×1 the scenario's Start if it has one,
    /// else now minus one pass of the scenario (so that no timestamp lies in the future).
    /// </summary>
    public DateTimeOffset? StartTime { get; set; }

    /// <summary>Where to write the ground truth CSV (none if null).</summary>
    public string? TruthCsvPath { get; set; }

    /// <summary>Where to record every published sample as CSV, for replay (none if null).</summary>
    public string? RecordCsvPath { get; set; }

    /// <summary>Repeat the scenario forever (for the demo); stop with the cancellation token.</summary>
    public bool Loop { get; set; }

    /// <summary>MQTT client id. Default "silowatch-sim-{seed}".</summary>
    public string? ClientId { get; set; }
}

/// <summary>What a run or a replay did.</summary>
public sealed record SimulationSummary(
    long Messages,
    long Samples,
    TimeSpan WallDuration,
    TimeSpan SimulatedDuration,
    long Dropped,
    long Duplicated,
    long Reordered,
    long Buffered,
    long PublishFailures)
{
    public double MessagesPerSecond => WallDuration.TotalSeconds > 0 ? Messages / WallDuration.TotalSeconds : 0;

    public double SamplesPerSecond => WallDuration.TotalSeconds > 0 ? Samples / WallDuration.TotalSeconds : 0;

    public override string ToString() => string.Create(System.Globalization.CultureInfo.InvariantCulture,
        $"{Messages} messages, {Samples} samples in {WallDuration.TotalSeconds:F1} s ({MessagesPerSecond:F0} msg/s, {SamplesPerSecond:F0} samples/s); simulated {SimulatedDuration}; network: {Dropped} dropped, {Buffered} buffered, {Duplicated} duplicated, {Reordered} reordered; {PublishFailures} publish failures");
}
