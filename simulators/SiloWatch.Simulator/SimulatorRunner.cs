using System.Diagnostics;
using System.Globalization;
using SiloWatch.Plant;
using SiloWatch.Simulator.Cli;
using SiloWatch.Simulator.Materials;
using SiloWatch.Simulator.Model;
using SiloWatch.Simulator.Mqtt;
using SiloWatch.Simulator.Output;
using SiloWatch.Simulator.Scenarios;

namespace SiloWatch.Simulator;

/// <summary>Runs a scenario against an MQTT broker: the model steps time, this publishes and paces it.</summary>
public static class SimulatorRunner
{
    public const double MaxSpeed = 1000;

    /// <summary>
    /// Runs the scenario (forever with <see cref="SimulatorRunOptions.Loop"/>). Cancellation ends the
    /// run normally: the summary of what was published so far is returned.
    /// </summary>
    public static async Task<SimulationSummary> RunAsync(SimulatorRunOptions options, TextWriter? progress, CancellationToken ct)
    {
        ArgumentNullException.ThrowIfNull(options);
        var model = CreateModel(options, DateTimeOffset.UtcNow);
        var clientId = options.ClientId ?? $"silowatch-sim-{options.Seed.ToString(CultureInfo.InvariantCulture)}-{Environment.ProcessId.ToString(CultureInfo.InvariantCulture)}";
        await using var publisher = new MqttPublisher(options.BrokerHost, options.BrokerPort, options.Username, options.Password, clientId, progress);
        using var truth = options.TruthCsvPath is { } tp ? TruthCsvWriter.Create(tp) : null;
        using var record = options.RecordCsvPath is { } rp ? RecordCsvWriter.Create(rp) : null;
        progress?.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"scenario '{model.Scenario.Name}': {model.Silos.Count} silos, start {Messages.TelemetryMessage.FormatTimestamp(model.Start)}, speed x{options.Speed}, seed {options.Seed}{(options.Loop ? ", looping" : "")}; broker {options.BrokerHost}:{options.BrokerPort}"));
        await publisher.ConnectAsync(ct).ConfigureAwait(false);

        var bar = progress is null ? null : new ProgressBar(progress);
        var wall = Stopwatch.StartNew();
        long messages = 0, samples = 0;
        var batch = new List<(string Topic, byte[] Payload)>();
        try
        {
            foreach (var tick in model.Run())
            {
                await PaceAsync(tick, wall, options.Speed, ct).ConfigureAwait(false);
                batch.Clear();
                foreach (var m in tick.Messages)
                {
                    batch.Add((m.Message.Topic(options.TopicPrefix), m.Message.ToPayload()));
                    if (!m.IsDuplicate)
                    {
                        samples += m.Message.Samples.Count;
                        record?.Write(m.Message);
                    }
                }

                if (batch.Count > 0)
                {
                    await publisher.PublishAsync(batch, ct).ConfigureAwait(false);
                    messages += batch.Count;
                }

                foreach (var row in tick.Truth)
                {
                    truth?.Write(row);
                }

                var fraction = options.Loop ? double.NaN : tick.Elapsed / model.Scenario.Duration;
                bar?.Report(fraction, string.Create(CultureInfo.InvariantCulture, $"sim {tick.Time.UtcDateTime:yyyy-MM-dd HH:mm:ss}Z, {messages} msgs"));
            }
        }
        catch (OperationCanceledException) when (ct.IsCancellationRequested)
        {
            // Stopping is the normal end of a looping demo.
        }

        bar?.Finish();
        var n = model.Network;
        var summary = new SimulationSummary(messages, samples, wall.Elapsed, model.Elapsed, n.Dropped, n.Duplicated, n.Reordered, n.Buffered, publisher.Retries);
        progress?.WriteLine(summary.ToString());
        return summary;
    }

    /// <summary>Builds the model a run would use, without a broker (tests and tools step it directly).</summary>
    public static PlantModel CreateModel(SimulatorRunOptions options, DateTimeOffset wallClockNow)
    {
        ArgumentNullException.ThrowIfNull(options);
        if (!(options.Speed >= 1 && options.Speed <= MaxSpeed))
        {
            throw new ArgumentOutOfRangeException(nameof(options), options.Speed, $"Speed must be between 1 and {MaxSpeed}");
        }

        if (options.BrokerPort is < 1 or > 65535)
        {
            throw new ArgumentOutOfRangeException(nameof(options), options.BrokerPort, "BrokerPort must be 1..65535");
        }

        if (string.IsNullOrWhiteSpace(options.TopicPrefix) || options.TopicPrefix.IndexOfAny(['#', '+']) >= 0 || options.TopicPrefix.EndsWith('/'))
        {
            throw new ArgumentException($"TopicPrefix '{options.TopicPrefix}' must be a topic level without wildcards or a trailing '/'", nameof(options));
        }

        var materials = MaterialReader.LoadFile(options.MaterialsPath);
        var (plant, findings) = PlantLoader.LoadFile(options.PlantPath, materials.Keys.ToHashSet(StringComparer.Ordinal));
        if (findings.Count > 0)
        {
            throw new InvalidDataException($"plant definition '{options.PlantPath}' has {findings.Count} problem(s):{Environment.NewLine}  " + string.Join(Environment.NewLine + "  ", findings));
        }

        var scenario = ScenarioLoader.LoadFile(options.ScenarioPath);
        var start = ResolveStart(options, scenario, wallClockNow);
        return new PlantModel(plant, materials, scenario, options.Seed, start, options.Loop);
    }

    /// <summary>Start of simulated time: explicit; else now at ×1; else the scenario's Start; else now minus one pass.</summary>
    public static DateTimeOffset ResolveStart(SimulatorRunOptions options, Scenario scenario, DateTimeOffset wallClockNow)
    {
        if (options.StartTime is { } s)
        {
            return s.ToUniversalTime();
        }

        var now = new DateTimeOffset(wallClockNow.UtcTicks - (wallClockNow.UtcTicks % TimeSpan.TicksPerSecond), TimeSpan.Zero);
        if (options.Speed <= 1)
        {
            return now;
        }

        return scenario.Start?.ToUniversalTime() ?? now - scenario.Duration;
    }

    private static async Task PaceAsync(TickResult tick, Stopwatch wall, double speed, CancellationToken ct)
    {
        if (speed <= 1)
        {
            // At ×1 a sample is published once its timestamp is reached: never ahead of the wall clock.
            TimeSpan ahead;
            while ((ahead = tick.Time - DateTimeOffset.UtcNow) > TimeSpan.Zero)
            {
                await Task.Delay(ahead < TimeSpan.FromMilliseconds(1) ? TimeSpan.FromMilliseconds(1) : ahead, ct).ConfigureAwait(false);
            }

            return;
        }

        var wait = (tick.Elapsed / speed) - wall.Elapsed;
        if (wait > TimeSpan.FromMilliseconds(1))
        {
            await Task.Delay(wait, ct).ConfigureAwait(false);
        }
    }
}
