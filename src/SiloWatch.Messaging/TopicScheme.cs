using SiloWatch.Plant;

namespace SiloWatch.Messaging;

/// <summary>
/// Every topic of the SiloWatch MQTT contract, version 1:
/// <c>{prefix}/v1/{kind}/{site}/{silo}</c> for telemetry, dead letters, state (retained), alarms
/// (retained), events and commands, and <c>{prefix}/v1/instance/{instanceId}</c> for the
/// retained instance status (its will is "offline"). Parsing validates each level with the same
/// id rules as <see cref="PlantValidator"/> before a level becomes a tag or a file name.
/// </summary>
public sealed class TopicScheme
{
    public const string Version = "v1";

    /// <summary>Longest topic accepted for parsing, in characters (far above any valid one).</summary>
    public const int MaxTopicLength = 256;

    private readonly string _telemetryRoot;
    private readonly string _commandRoot;

    public TopicScheme(string prefix)
    {
        if (!IsValidPrefix(prefix))
        {
            throw new ArgumentException($"topic prefix '{prefix}' must be 1-64 of letters, digits, '-' and '_' (one topic level)", nameof(prefix));
        }

        Prefix = prefix;
        _telemetryRoot = $"{prefix}/{Version}/telemetry/";
        _commandRoot = $"{prefix}/{Version}/command/";
    }

    public string Prefix { get; }

    /// <summary>Telemetry of one silo: <c>{prefix}/v1/telemetry/{site}/{silo}</c>.</summary>
    public string Telemetry(string siteId, string siloId) => Build("telemetry", siteId, siloId);

    /// <summary>
    /// Subscription filter for one silo's telemetry (an exact topic: instances are sharded by silo,
    /// and one silo's samples must reach one consumer).
    /// </summary>
    public string TelemetryFilter(string siteId, string siloId) => Telemetry(siteId, siloId);

    /// <summary>Subscription filter for every silo's telemetry: <c>{prefix}/v1/telemetry/+/+</c>.</summary>
    public string TelemetryFilterAll() => _telemetryRoot + "+/+";

    /// <summary>Dead letters (rejected telemetry with its reason): <c>{prefix}/v1/deadletter/{site}/{silo}</c>.</summary>
    public string DeadLetter(string siteId, string siloId) => Build("deadletter", siteId, siloId);

    /// <summary>Latest estimate of a silo (retained): <c>{prefix}/v1/state/{site}/{silo}</c>.</summary>
    public string State(string siteId, string siloId) => Build("state", siteId, siloId);

    /// <summary>Active alarms of a silo (retained): <c>{prefix}/v1/alarms/{site}/{silo}</c>.</summary>
    public string Alarms(string siteId, string siloId) => Build("alarms", siteId, siloId);

    /// <summary>Events (discharges, alarm transitions): <c>{prefix}/v1/events/{site}/{silo}</c>.</summary>
    public string Events(string siteId, string siloId) => Build("events", siteId, siloId);

    /// <summary>Commands to a silo's pipeline (tare, acknowledge...): <c>{prefix}/v1/command/{site}/{silo}</c>.</summary>
    public string Command(string siteId, string siloId) => Build("command", siteId, siloId);

    /// <summary>Subscription filter for the commands of one silo (exact topic).</summary>
    public string CommandFilter(string siteId, string siloId) => Command(siteId, siloId);

    /// <summary>Subscription filter for every silo's commands: <c>{prefix}/v1/command/+/+</c>.</summary>
    public string CommandFilterAll() => _commandRoot + "+/+";

    /// <summary>Retained status of one SiloWatch instance ("online", or the "offline" will): <c>{prefix}/v1/instance/{id}</c>.</summary>
    public string InstanceStatus(string instanceId)
    {
        if (!PlantValidator.IsValidLocalId(instanceId))
        {
            throw new ArgumentException($"instance id '{instanceId}' must be 1-48 of letters, digits, '-' and '_'", nameof(instanceId));
        }

        return $"{Prefix}/{Version}/instance/{instanceId}";
    }

    /// <summary>Parses a telemetry topic into validated site and silo ids.</summary>
    public bool TryParseTelemetry(string topic, out string siteId, out string siloId) =>
        TryParse(topic, _telemetryRoot, out siteId, out siloId);

    /// <summary>Parses a command topic into validated site and silo ids.</summary>
    public bool TryParseCommand(string topic, out string siteId, out string siloId) =>
        TryParse(topic, _commandRoot, out siteId, out siloId);

    /// <summary>
    /// Allocation-free routing: when <paramref name="topic"/> is a valid telemetry topic,
    /// <paramref name="siloKey"/> is its "site/silo" tail, the key of <see cref="PlantRegistry.TryGetSilo(ReadOnlySpan{char}, out SiloRef)"/>.
    /// </summary>
    public bool TryGetTelemetrySiloKey(ReadOnlySpan<char> topic, out ReadOnlySpan<char> siloKey)
    {
        siloKey = default;
        if (topic.Length > MaxTopicLength || !topic.StartsWith(_telemetryRoot, StringComparison.Ordinal))
        {
            return false;
        }

        var tail = topic[_telemetryRoot.Length..];
        var slash = tail.IndexOf('/');
        if (slash < 0 || !PlantValidator.IsValidSiteId(tail[..slash]) || !PlantValidator.IsValidLocalId(tail[(slash + 1)..]))
        {
            return false;
        }

        siloKey = tail;
        return true;
    }

    /// <summary>True when <paramref name="prefix"/> can be the first topic level.</summary>
    public static bool IsValidPrefix(string? prefix) =>
        prefix is { Length: > 0 and <= 64 } && prefix.All(c => char.IsAsciiLetterOrDigit(c) || c is '-' or '_');

    private bool TryParse(string topic, string root, out string siteId, out string siloId)
    {
        siteId = "";
        siloId = "";
        if (topic is null || topic.Length > MaxTopicLength || !topic.StartsWith(root, StringComparison.Ordinal))
        {
            return false;
        }

        var tail = topic.AsSpan(root.Length);
        var slash = tail.IndexOf('/');
        if (slash < 0)
        {
            return false;
        }

        // The id rules reject '+', '#', '/', empty levels, over-long levels and anything outside
        // [A-Za-z0-9_-], so a level is safe as a series tag and a file name.
        var site = tail[..slash];
        var silo = tail[(slash + 1)..];
        if (!PlantValidator.IsValidSiteId(site) || !PlantValidator.IsValidLocalId(silo))
        {
            return false;
        }

        siteId = site.ToString();
        siloId = silo.ToString();
        return true;
    }

    private string Build(string kind, string siteId, string siloId)
    {
        if (!PlantValidator.IsValidSiteId(siteId))
        {
            throw new ArgumentException($"site id '{siteId}' is not a valid topic level", nameof(siteId));
        }

        if (!PlantValidator.IsValidLocalId(siloId))
        {
            throw new ArgumentException($"silo id '{siloId}' is not a valid topic level", nameof(siloId));
        }

        return $"{Prefix}/{Version}/{kind}/{siteId}/{siloId}";
    }
}
