using System.Globalization;
using System.Text.Json;

namespace SiloWatch.Service.Alarms;

/// <summary>
/// One operator command to a silo. JSON on <c>{prefix}/v1/command/{site}/{silo}</c> (README,
/// "Alarms and commands"); the user comes from the MQTT v5 user property "user", never from the JSON.
/// </summary>
/// <param name="Id">The sender's id for the command, echoed in the answer (optional).</param>
/// <param name="Action">acknowledge, shelve, unshelve, reset, out-of-service, return-to-service, tare.</param>
/// <param name="AlarmId">Full id "site/silo/name" or the name alone; empty for tare.</param>
public sealed record AlarmCommand(string Id, string Action, string AlarmId, string User, TimeSpan? Duration, string Reason, string Comment)
{
    public const string Acknowledge = "acknowledge";
    public const string Shelve = "shelve";
    public const string Unshelve = "unshelve";
    public const string Reset = "reset";
    public const string OutOfService = "out-of-service";
    public const string ReturnToService = "return-to-service";
    public const string Tare = "tare";

    public static readonly IReadOnlyList<string> Actions = [Acknowledge, Shelve, Unshelve, Reset, OutOfService, ReturnToService, Tare];

    private const int MaxText = 500;

    /// <summary>Parses a command payload; on failure <paramref name="problem"/> says what is wrong.</summary>
    public static bool TryParse(ReadOnlySpan<byte> json, string user, string siteId, string siloId, out AlarmCommand command, out string problem)
    {
        command = new AlarmCommand("", "", "", user, null, "", "");
        problem = "";
        try
        {
            using var doc = JsonDocument.Parse(json.ToArray(), new JsonDocumentOptions { MaxDepth = 4 });
            var root = doc.RootElement;
            if (root.ValueKind != JsonValueKind.Object)
            {
                problem = "a command is a JSON object";
                return false;
            }

            var id = Text(root, "id");
            var action = Text(root, "action").ToLowerInvariant();
            var alarm = Text(root, "alarm");
            var reason = Text(root, "reason");
            var comment = Text(root, "comment");
            command = new AlarmCommand(id, action, Qualify(alarm, siteId, siloId), user, null, reason, comment);
            if (!Actions.Contains(action))
            {
                problem = $"unknown action '{Clip(action)}': one of {string.Join(", ", Actions)}";
                return false;
            }

            if (action != Tare && alarm.Length == 0)
            {
                problem = $"'{action}' needs the alarm id";
                return false;
            }

            if (action == Shelve)
            {
                if (!TryDuration(root, out var duration))
                {
                    problem = "shelve needs a duration: \"duration\" as hh:mm:ss or ISO-8601 (PT30M), or \"minutes\"";
                    return false;
                }

                if (reason.Length == 0)
                {
                    problem = "shelve needs a reason";
                    return false;
                }

                command = command with { Duration = duration };
            }

            return true;
        }
        catch (JsonException ex)
        {
            problem = "not valid JSON: " + ex.Message;
            return false;
        }
    }

    /// <summary>"name" → "site/silo/name"; a full id is kept (and checked against the topic's silo by the engine lookup).</summary>
    public static string Qualify(string alarm, string siteId, string siloId) =>
        alarm.Length == 0 || alarm.Contains('/', StringComparison.Ordinal) ? alarm : $"{siteId}/{siloId}/{alarm}";

    private static bool TryDuration(JsonElement root, out TimeSpan duration)
    {
        duration = default;
        if (root.TryGetProperty("minutes", out var m) && m.ValueKind == JsonValueKind.Number && m.TryGetDouble(out var minutes) && double.IsFinite(minutes) && minutes > 0 && minutes < 1e6)
        {
            duration = TimeSpan.FromMinutes(minutes);
            return true;
        }

        var text = Text(root, "duration");
        if (text.Length == 0)
        {
            return false;
        }

        if (text.StartsWith('P') || text.StartsWith('p'))
        {
            try
            {
                duration = System.Xml.XmlConvert.ToTimeSpan(text);
                return duration > TimeSpan.Zero;
            }
            catch (FormatException)
            {
                return false;
            }
        }

        return TimeSpan.TryParse(text, CultureInfo.InvariantCulture, out duration) && duration > TimeSpan.Zero;
    }

    private static string Text(JsonElement root, string name) =>
        root.TryGetProperty(name, out var v) && v.ValueKind == JsonValueKind.String ? Clip(v.GetString() ?? "").Trim() : "";

    private static string Clip(string s) => s.Length > MaxText ? s[..MaxText] : s;
}

/// <summary>What became of a command: accepted (with what it did) or refused (with why).</summary>
public sealed record CommandOutcome(bool Accepted, string Detail, AlarmCommand? Command)
{
    public static CommandOutcome Refused(string detail, AlarmCommand? command = null) => new(false, detail, command);

    public static CommandOutcome Done(string detail, AlarmCommand command) => new(true, detail, command);
}
