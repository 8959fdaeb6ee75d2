using Microsoft.Extensions.Options;
using MQTTnet;
using SiloWatch.Messaging;

namespace SiloWatch.Service.Ingest;

/// <summary>
/// Messages the broker received and refused: an MQTT 5 PUBACK with an error reason, e.g.
/// NotAuthorized when the broker's ACL does not let this instance's user write the topic (Mosquitto
/// 2.0 answers a denied QoS 1 publish so). A refused message is dropped, never retried: the broker
/// would answer the same, and the messages queued behind it would wait for ever. Refusals are counted
/// per topic kind (state, alarms, events, deadletter, instance) for /health, and logged at once for
/// the first refusal of a kind, then at most once per <see cref="LogInterval"/> and kind, with the
/// count of those in between. The log names the topic, the reason and the MQTT user; never a
/// password or a payload.
/// </summary>
public sealed partial class PublishRefusals(IOptions<MqttOptions> mqtt, TimeProvider time, ILogger<PublishRefusals> logger)
{
    /// <summary>At most one log line per topic kind in this interval.</summary>
    public static readonly TimeSpan LogInterval = TimeSpan.FromMinutes(1);

    /// <summary>/health reports "degraded" while the last refusal is younger than this.</summary>
    public static readonly TimeSpan HealthWindow = TimeSpan.FromMinutes(10);

    private readonly Lock _gate = new();
    private readonly Dictionary<string, KindState> _kinds = new(StringComparer.Ordinal);
    private LastRefusal? _last;
    private long _total;

    public long Total => Interlocked.Read(ref _total);

    /// <summary>Counts one refused message and logs it if its kind has not been logged within <see cref="LogInterval"/>.</summary>
    public void Record(string topic, MqttClientPublishReasonCode reason)
    {
        ArgumentException.ThrowIfNullOrEmpty(topic);
        var kind = KindOf(topic, mqtt.Value.TopicPrefix);
        var now = time.GetUtcNow();
        long unlogged;
        lock (_gate)
        {
            _total++;
            _last = new LastRefusal(topic, reason.ToString(), now);
            if (!_kinds.TryGetValue(kind, out var state))
            {
                state = new KindState();
                _kinds[kind] = state;
            }

            state.Count++;
            state.SinceLogged++;
            if (state.LoggedAt is { } logged && now - logged < LogInterval)
            {
                return;
            }

            unlogged = state.SinceLogged - 1;
            state.SinceLogged = 0;
            state.LoggedAt = now;
        }

        var user = mqtt.Value.Username.Length > 0 ? mqtt.Value.Username : "(anonymous)";
        if (reason == MqttClientPublishReasonCode.NotAuthorized)
        {
            LogNotAuthorized(logger, topic, user, unlogged, mqtt.Value.TopicPrefix, kind);
        }
        else
        {
            LogRefused(logger, topic, reason, unlogged);
        }
    }

    /// <summary>A plain snapshot for /health.</summary>
    public PublishRefusalsSnapshot Snapshot()
    {
        lock (_gate)
        {
            var recent = _last is { } last && time.GetUtcNow() - last.At < HealthWindow;
            return new PublishRefusalsSnapshot(
                _total,
                _kinds.ToDictionary(k => k.Key, k => k.Value.Count, StringComparer.Ordinal),
                _last,
                recent);
        }
    }

    /// <summary>The contract's kind level of a topic ({prefix}/v1/{kind}/...), or the whole topic when it is not one of ours.</summary>
    public static string KindOf(string topic, string prefix)
    {
        ArgumentNullException.ThrowIfNull(topic);
        ArgumentNullException.ThrowIfNull(prefix);
        var root = prefix + "/" + TopicScheme.Version + "/";
        if (!topic.StartsWith(root, StringComparison.Ordinal))
        {
            return topic;
        }

        var rest = topic.AsSpan(root.Length);
        var slash = rest.IndexOf('/');
        return (slash < 0 ? rest : rest[..slash]).ToString();
    }

    [LoggerMessage(Level = LogLevel.Error,
        Message = "The MQTT broker refused the message to {Topic}: NotAuthorized. Its ACL does not let the MQTT user '{User}' write there, " +
                  "so it was dropped ({Unlogged} more refused on this kind since the last line). Let the user write {Prefix}/v1/{Kind}/# " +
                  "(see deploy/mosquitto/silowatch.acl); /health counts refusals under publishRefusals")]
    private static partial void LogNotAuthorized(ILogger logger, string topic, string user, long unlogged, string prefix, string kind);

    [LoggerMessage(Level = LogLevel.Error,
        Message = "The MQTT broker refused the message to {Topic}: {Reason}; it was dropped ({Unlogged} more refused on this kind since the last line)")]
    private static partial void LogRefused(ILogger logger, string topic, MqttClientPublishReasonCode reason, long unlogged);

    private sealed class KindState
    {
        public long Count { get; set; }

        public long SinceLogged { get; set; }

        public DateTimeOffset? LoggedAt { get; set; }
    }
}

/// <summary>The last message the broker refused.</summary>
public sealed record LastRefusal(string Topic, string Reason, DateTimeOffset At);

/// <summary>Refused messages: the total, per topic kind, the last one, and whether it is recent enough to degrade /health.</summary>
public sealed record PublishRefusalsSnapshot(long Total, IReadOnlyDictionary<string, long> ByKind, LastRefusal? Last, bool Recent);
