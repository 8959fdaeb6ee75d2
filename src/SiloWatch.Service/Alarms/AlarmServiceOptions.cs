using System.ComponentModel.DataAnnotations;

namespace SiloWatch.Service.Alarms;

/// <summary>Who may command the silos over MQTT and the status page's API. Section <see cref="SectionName"/>.</summary>
public sealed class CommandOptions
{
    public const string SectionName = "Commands";

    /// <summary>
    /// User names allowed to acknowledge, shelve, reset, take out of service and tare. Default empty:
    /// every MQTT command is refused. The MQTT v5 user property "user" of a command names the sender;
    /// since a client can claim any user property, the broker's ACL must also let only authorised
    /// MQTT users publish to the command topics (README, "Alarms and commands").
    /// </summary>
    public List<string> AllowedUsers { get; set; } = [];

    /// <summary>Largest command payload accepted, bytes. Default 4096.</summary>
    [Range(64, 65536)]
    public int MaxPayloadBytes { get; set; } = 4096;
}

/// <summary>Which clock the per-silo evaluation follows. Section <see cref="SectionName"/>.</summary>
public sealed class EvaluationOptions
{
    public const string SectionName = "Evaluation";

    /// <summary>
    /// Wall (default): each silo is evaluated at the service's clock, as soon as a message's new
    /// samples have been processed (at most once per Instance:MinEvaluationInterval) and, without new
    /// samples, every Instance:PublishInterval, so staleness, alarm delays and shelving expiry keep time.
    /// Samples: each silo is evaluated every <see cref="SampleInterval"/> of its samples' own time, for
    /// replays and accelerated simulations whose timestamps lie in the past (set Decoder:MaxLateness=0).
    /// With Samples a silo whose feed stops is not evaluated further: never use it for live monitoring.
    /// </summary>
    public EvaluationClock Clock { get; set; } = EvaluationClock.Wall;

    /// <summary>Evaluation step in sample time with <see cref="EvaluationClock.Samples"/>. Default 1 s.</summary>
    public TimeSpan SampleInterval { get; set; } = TimeSpan.FromSeconds(1);

    /// <summary>Alarm counts are written to the time-series store at least this often per site. Default 10 s.</summary>
    public TimeSpan AlarmCountInterval { get; set; } = TimeSpan.FromSeconds(10);
}

public enum EvaluationClock
{
    Wall,
    Samples,
}
