using System.Runtime.CompilerServices;
using System.Text.Json;
using Microsoft.Extensions.Options;
using SiloWatch.Service.Alarms;
using SiloWatch.Service.Hosting;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Service.StatusPage;

/// <summary>
/// The status page and its API on the health host:
/// GET / (page), GET /api/status (every site with its alarm flood state, every silo), GET /api/status/stream (the same, pushed as
/// server-sent events "status"), GET /api/alarms (active alarms), POST
/// /api/alarms/{site}/{silo}/{alarm}/ack|shelve|unshelve|reset (an authorised user),
/// POST/GET/DELETE /api/session (log in, who, log out).
/// </summary>
public static class StatusPageEndpoints
{
    private static readonly string[] ActionNames = ["ack", "shelve", "unshelve", "reset"];

    public static IHostApplicationBuilder AddServices(IHostApplicationBuilder builder)
    {
        ArgumentNullException.ThrowIfNull(builder);
        builder.Services.AddOptions<StatusPageOptions>().Bind(builder.Configuration.GetSection(StatusPageOptions.SectionName));
        builder.Services.AddSingleton<OperatorAccess>();
        return builder;
    }

    public static WebApplication Map(WebApplication app)
    {
        ArgumentNullException.ThrowIfNull(app);
        if (!app.Services.GetRequiredService<IOptions<StatusPageOptions>>().Value.Enabled)
        {
            return app;
        }

        var access = app.Services.GetRequiredService<OperatorAccess>();
        var floods = app.Services.GetService<SiloAlarmsFactory>()?.Floods;
        var readers = app.MapGroup("").AddEndpointFilter(async (context, next) =>
            access.CanRead(context.HttpContext) ? await next(context).ConfigureAwait(false) : Results.Problem("reading is open on loopback only (StatusPage:AllowRemoteRead)", statusCode: 403));

        readers.MapGet("/", (HttpContext http) => Asset(http, StatusPageAssets.Html, "text/html; charset=utf-8"));
        readers.MapGet("/status.css", (HttpContext http) => Asset(http, StatusPageAssets.Css, "text/css; charset=utf-8"));
        readers.MapGet("/status.js", (HttpContext http) => Asset(http, StatusPageAssets.Script, "text/javascript; charset=utf-8"));

        readers.MapGet("/api/status", (HttpContext http, TelemetryIngest ingest, IOptions<InstanceOptions> instance, TimeProvider time) =>
            Results.Text(StatusJson.Status(ingest.Pipelines, instance.Value.Id, time.GetUtcNow().ToUnixTimeMilliseconds(), access.SessionUser(http), floods), "application/json"));

        readers.MapGet("/api/status/stream", (HttpContext http, TelemetryIngest ingest, IOptions<InstanceOptions> instance, IOptions<StatusPageOptions> options,
            ChangeSignal changed, TimeProvider time, CancellationToken ct) =>
            TypedResults.ServerSentEvents(Stream(ingest, instance.Value.Id, access.SessionUser(http), floods, options.Value, changed, time, ct), "status"));

        readers.MapGet("/api/alarms", (TelemetryIngest ingest) => Results.Text(StatusJson.Alarms(ingest.Pipelines), "application/json"));

        readers.MapPost("/api/alarms/{site}/{silo}/{alarm}/{action}", async (string site, string silo, string alarm, string action, HttpContext http,
            TelemetryIngest ingest, ILogger<OperatorAccess> logger) =>
        {
            var user = access.ActingUser(http);
            if (user is null)
            {
                return Results.Problem("log in (or send an API token) to act on alarms", statusCode: 401);
            }

            if (!ActionNames.Contains(action))
            {
                return Results.Problem($"unknown action '{Clip(action)}': one of {string.Join(", ", ActionNames)}", statusCode: 404);
            }

            var pipeline = ingest.Pipelines.FirstOrDefault(p => p.Silo.SiteId == site && p.Silo.SiloId == silo);
            if (pipeline?.Alarms is not { } alarms)
            {
                return Results.Problem($"silo {Clip(site)}/{Clip(silo)} is not watched by this instance", statusCode: 404);
            }

            var alarmId = AlarmCommand.Qualify(alarm, site, silo);
            if (!alarms.Definitions.Any(d => d.Id == alarmId))
            {
                return Results.Problem($"silo {site}/{silo} has no alarm '{Clip(alarm)}'", statusCode: 404);
            }

            var body = await ReadBodyAsync(http).ConfigureAwait(false);
            var command = new AlarmCommand(
                "http",
                action == "ack" ? AlarmCommand.Acknowledge : action,
                alarmId,
                user,
                body.Duration,
                body.Reason,
                body.Comment);
            if (command.Action == AlarmCommand.Shelve && (command.Duration is null || command.Reason.Length == 0))
            {
                return Results.Problem("shelve needs \"minutes\" (or \"duration\") and a \"reason\"", statusCode: 400);
            }

            var outcome = alarms.Execute(command)!;
            alarms.Answer(outcome);
            if (outcome.Accepted)
            {
                logger.LogInformation("Status page: {Action} on {Alarm} by {User}: {Detail}", command.Action, command.AlarmId, user, outcome.Detail);
            }
            else
            {
                logger.LogWarning("Status page: {Action} on {Alarm} by {User} refused: {Detail}", command.Action, command.AlarmId, user, outcome.Detail);
            }

            return Results.Json(new { accepted = outcome.Accepted, detail = outcome.Detail }, statusCode: outcome.Accepted ? 200 : 409);
        });

        readers.MapPost("/api/session", async (HttpContext http, IOptions<StatusPageOptions> options) =>
        {
            var body = await ReadBodyAsync(http).ConfigureAwait(false);
            var session = await access.LoginAsync(body.Name, body.Password, http.RequestAborted).ConfigureAwait(false);
            if (session is null)
            {
                return Results.Problem("wrong name or password", statusCode: 401);
            }

            http.Response.Cookies.Append(OperatorAccess.SessionCookie, session, new CookieOptions
            {
                HttpOnly = true,
                SameSite = SameSiteMode.Strict,
                Secure = http.Request.IsHttps,
                MaxAge = options.Value.SessionLifetime,
                Path = "/",
            });
            return Results.Json(new { user = body.Name });
        });
        readers.MapGet("/api/session", (HttpContext http) => Results.Json(new { user = access.SessionUser(http) }));
        readers.MapDelete("/api/session", (HttpContext http) =>
        {
            access.Logout(http.Request.Cookies[OperatorAccess.SessionCookie]);
            http.Response.Cookies.Delete(OperatorAccess.SessionCookie);
            return Results.NoContent();
        });
        return app;
    }

    private static IResult Asset(HttpContext http, string text, string contentType)
    {
        var headers = http.Response.Headers;
        headers.XContentTypeOptions = "nosniff";
        headers.ContentSecurityPolicy = "default-src 'self'; frame-ancestors 'none'; form-action 'self'";
        headers.CacheControl = "no-cache";
        return Results.Text(text, contentType);
    }

    private static async IAsyncEnumerable<string> Stream(TelemetryIngest ingest, string instanceId, string? user, Monitoring.Alarms.AlarmFloodTracker? floods, StatusPageOptions options,
        ChangeSignal changed, TimeProvider time, [EnumeratorCancellation] CancellationToken ct)
    {
        while (!ct.IsCancellationRequested)
        {
            var version = changed.Version;
            yield return StatusJson.Status(ingest.Pipelines, instanceId, time.GetUtcNow().ToUnixTimeMilliseconds(), user, floods);
            if (!await PauseAsync(version, options, changed, time, ct).ConfigureAwait(false))
            {
                yield break;
            }
        }
    }

    // Waits for the next change (at most the heartbeat), but never pushes faster than the minimum interval.
    private static async Task<bool> PauseAsync(long version, StatusPageOptions options, ChangeSignal changed, TimeProvider time, CancellationToken ct)
    {
        try
        {
            await Task.Delay(options.StreamMinInterval, time, ct).ConfigureAwait(false);
            await changed.WaitAsync(version, options.StreamHeartbeat, time, ct).ConfigureAwait(false);
            return true;
        }
        catch (OperationCanceledException)
        {
            return false;
        }
    }

    private sealed record ActionBody(string Name, string Password, string Comment, string Reason, TimeSpan? Duration);

    private static async Task<ActionBody> ReadBodyAsync(HttpContext http)
    {
        if (http.Request.ContentLength is 0 or > 16_384)
        {
            return new ActionBody("", "", "", "", null);
        }

        try
        {
            using var doc = await JsonDocument.ParseAsync(http.Request.Body, default, http.RequestAborted).ConfigureAwait(false);
            var root = doc.RootElement;
            if (root.ValueKind != JsonValueKind.Object)
            {
                return new ActionBody("", "", "", "", null);
            }

            TimeSpan? duration = null;
            if (root.TryGetProperty("minutes", out var m) && m.ValueKind == JsonValueKind.Number && m.TryGetDouble(out var minutes) && minutes > 0 && minutes < 1e6)
            {
                duration = TimeSpan.FromMinutes(minutes);
            }
            else if (Text(root, "duration") is { Length: > 0 } d && TimeSpan.TryParse(d, System.Globalization.CultureInfo.InvariantCulture, out var parsed) && parsed > TimeSpan.Zero)
            {
                duration = parsed;
            }

            return new ActionBody(Text(root, "name"), Text(root, "password"), Text(root, "comment"), Text(root, "reason"), duration);
        }
        catch (JsonException)
        {
            return new ActionBody("", "", "", "", null);
        }
    }

    private static string Text(JsonElement root, string name) =>
        root.TryGetProperty(name, out var v) && v.ValueKind == JsonValueKind.String ? Clip(v.GetString() ?? "", 500).Trim() : "";

    private static string Clip(string s, int max = 64) => s.Length > max ? s[..max] : s;
}
