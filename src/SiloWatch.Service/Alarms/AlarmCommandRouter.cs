using System.Buffers;
using MQTTnet;
using MQTTnet.Packets;
using MQTTnet.Protocol;
using SiloWatch.Messaging;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Service.Alarms;

/// <summary>
/// Commands from MQTT (<c>{prefix}/v1/command/{site}/{silo}</c>): checks who sent them, parses them,
/// carries them out on the silo's alarms and answers on the silo's events topic. A refused command
/// is logged and answered with a "command-refused" event; an accepted one is journaled by the
/// alarm engine's transition (with the user) or by the tare record.
/// </summary>
public sealed class AlarmCommandRouter
{
    public const string UserProperty = "user";

    private readonly IReadOnlyDictionary<string, SiloPipeline> _pipelines;
    private readonly TopicScheme _topics;
    private readonly CommandOptions _options;
    private readonly HashSet<string> _allowed;
    private readonly OutboundQueue _outbound;
    private readonly TimeProvider _time;
    private readonly string _instanceId;
    private readonly ILogger<AlarmCommandRouter> _logger;

    public AlarmCommandRouter(IReadOnlyDictionary<string, SiloPipeline> pipelines, TopicScheme topics, CommandOptions options, OutboundQueue outbound,
        TimeProvider time, string instanceId, ILogger<AlarmCommandRouter> logger)
    {
        _pipelines = pipelines;
        _topics = topics;
        _options = options;
        _allowed = new HashSet<string>(options.AllowedUsers.Where(u => !string.IsNullOrWhiteSpace(u)).Select(u => u.Trim()), StringComparer.Ordinal);
        _outbound = outbound;
        _time = time;
        _instanceId = instanceId;
        _logger = logger;
        if (_allowed.Count == 0)
        {
            _logger.LogWarning("No user is allowed to command silos (Commands:AllowedUsers is empty): every MQTT command will be refused");
        }
    }

    /// <summary>Topic filters of the commands of the owned silos (one wildcard when the instance owns every silo).</summary>
    public IReadOnlyList<string> Subscriptions(bool ownsAll) => ownsAll
        ? [_topics.CommandFilterAll()]
        : [.. _pipelines.Values.Select(p => _topics.CommandFilter(p.Silo.SiteId, p.Silo.SiloId))];

    /// <summary>True when the topic is a command topic (then <see cref="Handle"/> takes it).</summary>
    public bool IsCommand(string topic) => topic.StartsWith(_topics.Prefix + "/" + TopicScheme.Version + "/command/", StringComparison.Ordinal);

    /// <summary>Handles one command message; never throws.</summary>
    public void Handle(MqttApplicationMessage message)
    {
        try
        {
            HandleCore(message);
        }
        catch (Exception ex)
        {
            _logger.LogError(ex, "Handling a command on {Topic} failed", message.Topic);
        }
    }

    /// <summary>Whether a user may command (the HTTP API checks its own login first, then this list).</summary>
    public bool IsAllowed(string user) => _allowed.Contains(user);

    private void HandleCore(MqttApplicationMessage message)
    {
        if (!_topics.TryParseCommand(message.Topic, out var siteId, out var siloId))
        {
            _logger.LogWarning("Command refused: topic {Topic} does not name a valid site and silo", Clip(message.Topic));
            return;
        }

        var user = UserOf(message.UserProperties);
        if (!_pipelines.TryGetValue(siteId + "/" + siloId, out var pipeline) || pipeline.Alarms is not { } alarms)
        {
            // Not ours (another shard) or unknown: answer only when the plant does not know it at all is not decidable here; say why.
            Refuse(siteId, siloId, CommandOutcome.Refused($"silo {siteId}/{siloId} is not watched by instance {_instanceId}"), user);
            return;
        }

        if (message.Payload.Length > _options.MaxPayloadBytes)
        {
            Refuse(siteId, siloId, CommandOutcome.Refused($"command larger than {_options.MaxPayloadBytes} bytes"), user, alarms);
            return;
        }

        var payload = message.Payload.IsSingleSegment ? message.Payload.FirstSpan : message.Payload.ToArray();
        if (!AlarmCommand.TryParse(payload, user, siteId, siloId, out var command, out var problem))
        {
            Refuse(siteId, siloId, CommandOutcome.Refused(problem, command), user, alarms);
            return;
        }

        if (user.Length == 0)
        {
            Refuse(siteId, siloId, CommandOutcome.Refused("no MQTT v5 user property \"user\": commands must say who sends them", command), user, alarms);
            return;
        }

        if (!_allowed.Contains(user))
        {
            Refuse(siteId, siloId, CommandOutcome.Refused($"user '{user}' is not allowed to command silos", command), user, alarms);
            return;
        }

        var outcome = alarms.Execute(command);
        if (outcome is null)
        {
            _logger.LogInformation("Command {Action} for {Silo} by {User} queued for the silo's worker", command.Action, pipeline.Silo.Key, user);
            return;
        }

        if (outcome.Accepted)
        {
            _logger.LogInformation("Command {Action} on {Alarm} by {User} accepted: {Detail}", command.Action, command.AlarmId, user, outcome.Detail);
        }
        else
        {
            _logger.LogWarning("Command {Action} on {Alarm} by {User} refused: {Detail}", command.Action, command.AlarmId, user, outcome.Detail);
        }

        alarms.Answer(outcome);
    }

    private void Refuse(string siteId, string siloId, CommandOutcome outcome, string user, SiloAlarms? alarms = null)
    {
        _logger.LogWarning("Command for {Site}/{Silo} from {User} refused: {Detail}", siteId, siloId, user.Length == 0 ? "(no user)" : Clip(user), outcome.Detail);
        if (alarms is not null)
        {
            alarms.Answer(outcome);
            return;
        }

        _outbound.Enqueue(new OutboundMessage(_topics.Events(siteId, siloId),
            AlarmPayloads.CommandResult(outcome, siteId, siloId, _time.GetUtcNow().ToUnixTimeMilliseconds(), _instanceId), Retain: false, MqttQualityOfServiceLevel.AtLeastOnce));
    }

    private static string UserOf(List<MqttUserProperty>? properties)
    {
        if (properties is null)
        {
            return "";
        }

        foreach (var p in properties)
        {
            if (string.Equals(p.Name, UserProperty, StringComparison.Ordinal))
            {
                var value = p.ReadValueAsString().Trim();
                return value.Length > 64 ? value[..64] : value;
            }
        }

        return "";
    }

    private static string Clip(string s) => s.Length > 120 ? s[..120] : s;
}
