using System.ComponentModel.DataAnnotations;

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

    /// <summary>Interval at which estimates are evaluated and published. Default 1 s.</summary>
    public TimeSpan PublishInterval { get; set; } = TimeSpan.FromSeconds(1);

    /// <summary>Interval of the per-silo summary line in the log (0 = off). Default 10 s.</summary>
    public TimeSpan LogInterval { get; set; } = TimeSpan.FromSeconds(10);
}

public enum QueueFullMode
{
    Wait,
    Drop,
}
