using System.CommandLine;
using System.Globalization;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json;

namespace SiloWatch.Cli;

/// <summary>
/// `silowatch alarms`: the active alarms of a running service, and the operator actions on them,
/// through the service's HTTP API (the status page host, loopback by default).
/// </summary>
internal static class AlarmsCommand
{
    public const string TokenVariable = "SILOWATCH_TOKEN";

    public static Command Create()
    {
        var url = new Option<string>("--url")
        {
            Description = "The service's status page host (Health:Urls)",
            DefaultValueFactory = _ => "http://127.0.0.1:8077",
            Recursive = true,
        };
        var token = new Option<string?>("--token")
        {
            Description = $"API token for actions (default: the {TokenVariable} environment variable); never stored by the CLI",
            Recursive = true,
        };
        var command = new Command("alarms", "List active alarms of a running service, or acknowledge, shelve, unshelve or reset one");
        command.Options.Add(url);
        command.Options.Add(token);

        var list = new Command("list", "Active alarms of every silo the service owns");
        list.SetAction(async (parse, ct) => await ListAsync(new Uri(parse.GetValue(url)!), ct).ConfigureAwait(false));
        command.Subcommands.Add(list);

        foreach (var (name, action, description) in new[]
        {
            ("ack", "ack", "Acknowledge an alarm"),
            ("unshelve", "unshelve", "Return a shelved alarm to service"),
            ("reset", "reset", "Reset a latched alarm that has returned to normal"),
        })
        {
            var alarm = new Argument<string>("alarm") { Description = "Alarm id: site/silo/alarm (as `alarms list` shows)" };
            var comment = new Option<string?>("--comment") { Description = "Comment for the journal" };
            var sub = new Command(name, description) { alarm, comment };
            sub.SetAction(async (parse, ct) => await ActAsync(new Uri(parse.GetValue(url)!), parse.GetValue(token), parse.GetValue(alarm)!, action,
                new { comment = parse.GetValue(comment) ?? "" }, ct).ConfigureAwait(false));
            command.Subcommands.Add(sub);
        }

        var shelveAlarm = new Argument<string>("alarm") { Description = "Alarm id: site/silo/alarm" };
        var minutes = new Option<int>("--minutes") { Description = "How long, minutes (the service caps it)", DefaultValueFactory = _ => 60 };
        var reason = new Option<string>("--reason") { Description = "Why it is shelved (required, journaled)", Required = true };
        var shelve = new Command("shelve", "Shelve an alarm for a limited time") { shelveAlarm, minutes, reason };
        shelve.SetAction(async (parse, ct) => await ActAsync(new Uri(parse.GetValue(url)!), parse.GetValue(token), parse.GetValue(shelveAlarm)!, "shelve",
            new { minutes = parse.GetValue(minutes), reason = parse.GetValue(reason) }, ct).ConfigureAwait(false));
        command.Subcommands.Add(shelve);
        return command;
    }

    private static async Task<int> ListAsync(Uri url, CancellationToken ct)
    {
        using var http = new HttpClient { BaseAddress = url, Timeout = TimeSpan.FromSeconds(10) };
        JsonElement alarms;
        try
        {
            alarms = await http.GetFromJsonAsync<JsonElement>("/api/alarms", ct).ConfigureAwait(false);
        }
        catch (HttpRequestException ex)
        {
            await Console.Error.WriteLineAsync($"cannot reach the service at {url}: {ex.Message}").ConfigureAwait(false);
            return 2;
        }

        if (alarms.GetArrayLength() == 0)
        {
            Console.Out.WriteLine("no active alarms");
            return 0;
        }

        Console.Out.WriteLine($"{"alarm",-40} {"state",-34} {"prio",4} {"value",10} {"setpoint",10}  since");
        foreach (var a in alarms.EnumerateArray())
        {
            Console.Out.WriteLine(string.Create(CultureInfo.InvariantCulture,
                $"{Text(a, "alarm"),-40} {Text(a, "state"),-34} {Text(a, "priority"),4} {Text(a, "value"),10} {Text(a, "setpoint"),10}  {Text(a, "since")}"));
            Console.Out.WriteLine($"    {Text(a, "message")}");
        }

        Console.Out.WriteLine("Limits are set by a licensed structural engineer under local code; on a wall-load alarm follow the site procedure, keep people clear, never enter the silo.");
        return 0;
    }

    private static async Task<int> ActAsync(Uri url, string? token, string alarmId, string action, object body, CancellationToken ct)
    {
        token ??= Environment.GetEnvironmentVariable(TokenVariable);
        if (string.IsNullOrWhiteSpace(token))
        {
            await Console.Error.WriteLineAsync($"an API token is needed: --token or {TokenVariable} (configured in StatusPage:Tokens)").ConfigureAwait(false);
            return 2;
        }

        var parts = alarmId.Split('/');
        if (parts.Length != 3 || parts.Any(p => p.Length == 0))
        {
            await Console.Error.WriteLineAsync($"alarm id '{alarmId}' must be site/silo/alarm, as `silowatch alarms list` shows").ConfigureAwait(false);
            return 2;
        }

        using var http = new HttpClient { BaseAddress = url, Timeout = TimeSpan.FromSeconds(10) };
        http.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", token);
        var path = $"/api/alarms/{Uri.EscapeDataString(parts[0])}/{Uri.EscapeDataString(parts[1])}/{Uri.EscapeDataString(parts[2])}/{action}";
        try
        {
            using var response = await http.PostAsJsonAsync(path, body, ct).ConfigureAwait(false);
            var text = await response.Content.ReadAsStringAsync(ct).ConfigureAwait(false);
            var detail = Detail(text);
            if (response.IsSuccessStatusCode)
            {
                Console.Out.WriteLine($"{alarmId}: {action} accepted: {detail}");
                return 0;
            }

            await Console.Error.WriteLineAsync($"{alarmId}: {action} refused ({(int)response.StatusCode}): {detail}").ConfigureAwait(false);
            return 1;
        }
        catch (HttpRequestException ex)
        {
            await Console.Error.WriteLineAsync($"cannot reach the service at {url}: {ex.Message}").ConfigureAwait(false);
            return 2;
        }
    }

    private static string Detail(string json)
    {
        try
        {
            using var doc = JsonDocument.Parse(json);
            foreach (var name in new[] { "detail", "title" })
            {
                if (doc.RootElement.TryGetProperty(name, out var v) && v.ValueKind == JsonValueKind.String)
                {
                    return v.GetString() ?? "";
                }
            }
        }
        catch (JsonException)
        {
        }

        return json;
    }

    private static string Text(JsonElement e, string name) =>
        e.TryGetProperty(name, out var v) ? v.ValueKind switch
        {
            JsonValueKind.String => v.GetString() ?? "",
            JsonValueKind.Null => "-",
            _ => v.GetRawText(),
        } : "";
}
