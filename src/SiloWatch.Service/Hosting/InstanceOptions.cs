using System.ComponentModel.DataAnnotations;
using System.Globalization;
using Microsoft.Extensions.Options;

namespace SiloWatch.Service.Hosting;

/// <summary>What this instance is and which silos it owns. Section <see cref="SectionName"/>.</summary>
public sealed class InstanceOptions
{
    public const string SectionName = "Instance";

    /// <summary>Instance id, used in the MQTT client id and the status topic. Default "silowatch-0".</summary>
    [Required, RegularExpression("^[a-z0-9][a-z0-9-]{0,47}$")]
    public string Id { get; set; } = "silowatch-0";

    /// <summary>Plant definition file. Default config/plant.demo.json (the invented demo plant).</summary>
    [Required]
    public string PlantFile { get; set; } = "config/plant.demo.json";

    /// <summary>Material library file. Default config/materials.json.</summary>
    [Required]
    public string MaterialsFile { get; set; } = "config/materials.json";

    /// <summary>This instance's shard, 0-based. Default 0.</summary>
    [Range(0, 1023)]
    public int ShardIndex { get; set; }

    /// <summary>Number of shards the plant's silos are spread over. Default 1 (this instance owns every silo).</summary>
    [Range(1, 1024)]
    public int ShardCount { get; set; } = 1;

    /// <summary>Explicit "site/silo" list this instance owns; when set it replaces the shard rule.</summary>
    public List<string> Silos { get; set; } = [];

    /// <summary>Worker loops the silos are partitioned over. Default 0 = one per processor.</summary>
    [Range(0, 64)]
    public int Partitions { get; set; }

    /// <summary>Capacity of each partition's ingest queue, in MQTT messages. Default 4096.</summary>
    [Range(16, 1_000_000)]
    public int QueueCapacity { get; set; } = 4096;

    /// <summary>
    /// What happens when a partition queue is full. Wait (default): the MQTT receive callback waits
    /// for room, so the broker holds QoS 1 messages and nothing is lost. Drop: the message is
    /// dropped, counted and sent to the dead-letter topic.
    /// </summary>
    public QueueFullMode QueueFullMode { get; set; } = QueueFullMode.Wait;

    /// <summary>
    /// Longest time a processed telemetry message waits for its silo's checkpoint (store flushed,
    /// resume point saved in the journal), after which it is acknowledged to the broker. Until then
    /// the broker keeps it for the persistent session, so a kill loses nothing. Default 1 s.
    /// </summary>
    public TimeSpan CheckpointInterval { get; set; } = TimeSpan.FromSeconds(1);

    /// <summary>
    /// A worker checkpoints at the latest when this many messages wait for it. Keep it below the
    /// broker's in-flight window for this client (Mosquitto: max_inflight_messages, 0 = unlimited),
    /// or the broker pauses until the next timed checkpoint. Default 1000.
    /// </summary>
    [Range(1, 65535)]
    public int CheckpointMessages { get; set; } = 1000;

    /// <summary>
    /// A silo that receives no new samples is evaluated (estimate, wall, alarms) and its state
    /// published at least this often, at the service's clock: staleness, alarm on/off delays and
    /// shelving expiry are timed by it. Default 1 s; 1 ms .. 1 h.
    /// </summary>
    public TimeSpan PublishInterval { get; set; } = TimeSpan.FromSeconds(1);

    /// <summary>
    /// A silo is evaluated as soon as a message's new samples have been processed, but no more often
    /// than this: a state follows its newest sample within this interval, and a fast feed costs at
    /// most one evaluation and one state message per silo and interval. 0 evaluates after every
    /// message with samples. Default 25 ms; 0 .. PublishInterval. (With Evaluation:Clock Samples,
    /// replays, the evaluation follows the samples' time and this is not used.)
    /// </summary>
    public TimeSpan MinEvaluationInterval { get; set; } = TimeSpan.FromMilliseconds(25);

    /// <summary>
    /// At stop, the partition queues are drained for at most this long; what is still queued then is
    /// left unacknowledged (the broker delivers it again to the persistent session) and each worker
    /// checkpoints what it has processed. Keep it well below the host's shutdown timeout (20 s), which
    /// must also cover the checkpoint, the store flush, the last states and the disconnect.
    /// Default 8 s; 0 .. 1 min.
    /// </summary>
    public TimeSpan StopDrainTimeout { get; set; } = TimeSpan.FromSeconds(8);

    /// <summary>Interval of the per-silo summary line in the log (0 = off). Default 10 s.</summary>
    public TimeSpan LogInterval { get; set; } = TimeSpan.FromSeconds(10);
}

public enum QueueFullMode
{
    Wait,
    Drop,
}

/// <summary>Checks the durations of <see cref="InstanceOptions"/> at start-up; each failure names the key and the value.</summary>
public sealed class InstanceOptionsValidator : IValidateOptions<InstanceOptions>
{
    public ValidateOptionsResult Validate(string? name, InstanceOptions options)
    {
        ArgumentNullException.ThrowIfNull(options);
        var failures = new List<string>();
        void Check(string key, TimeSpan value, TimeSpan min, TimeSpan max)
        {
            if (value < min || value > max)
            {
                failures.Add(string.Create(CultureInfo.InvariantCulture, $"{InstanceOptions.SectionName}:{key} = '{value}': must be {min:c} .. {max:c}"));
            }
        }

        Check(nameof(options.PublishInterval), options.PublishInterval, TimeSpan.FromMilliseconds(1), TimeSpan.FromHours(1));
        Check(nameof(options.MinEvaluationInterval), options.MinEvaluationInterval, TimeSpan.Zero,
            options.PublishInterval > TimeSpan.Zero ? options.PublishInterval : TimeSpan.Zero);
        Check(nameof(options.CheckpointInterval), options.CheckpointInterval, TimeSpan.FromMilliseconds(1), TimeSpan.FromHours(1));
        Check(nameof(options.StopDrainTimeout), options.StopDrainTimeout, TimeSpan.Zero, TimeSpan.FromMinutes(1));
        Check(nameof(options.LogInterval), options.LogInterval, TimeSpan.Zero, TimeSpan.FromDays(1));
        return failures.Count == 0 ? ValidateOptionsResult.Success : ValidateOptionsResult.Fail(failures);
    }
}
