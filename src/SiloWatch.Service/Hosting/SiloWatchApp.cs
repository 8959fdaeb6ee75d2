using Serilog;
using SiloWatch.Service.Health;

namespace SiloWatch.Service.Hosting;

/// <summary>Builds the SiloWatch host: Program.cs and the integration tests use the same wiring.</summary>
public static class SiloWatchApp
{
    public const string ConfigFile = "config/appsettings.json";

    /// <summary>The host setting that makes the default configuration files reload on change (a file watcher).</summary>
    public const string ReloadConfigOnChangeKey = "hostBuilder:reloadConfigOnChange";

    public static WebApplication Build(string[] args, Action<WebApplicationBuilder>? configure = null)
    {
        // The host's default appsettings*.json sources would watch the content root for changes, and a watch
        // there is recursive: every write of the embedded store and the journal below it became an inotify
        // event that a thread of its own read (about 7 % of the service's CPU at 400 silos, scale-load).
        // Nothing here reloads options at run time, so the defaults are read once.
        var builder = WebApplication.CreateBuilder(new WebApplicationOptions
        {
            Args = [$"--{ReloadConfigOnChangeKey}=false", .. args],
            ContentRootPath = Directory.GetCurrentDirectory(),
        });

        // config/appsettings.json, then SILOWATCH_* environment variables (e.g. SILOWATCH_Mqtt__Host), then the command line.
        builder.Configuration.AddJsonFile(builder.Environment.ResolvePath(ConfigFile), optional: true, reloadOnChange: false);
        builder.Configuration.AddEnvironmentVariables("SILOWATCH_");
        builder.Configuration.AddCommandLine(args);
        configure?.Invoke(builder);

        // The host's own logger, not the static one: with the static one, the last host built in a process took
        // every host's events and a host stopping (which closes the static logger) silenced the others.
        // Program.cs keeps the static bootstrap logger for what happens before and after the host.
        builder.Services.AddSerilog(
            (sp, cfg) => cfg
                .ReadFrom.Configuration(builder.Configuration)
                .ReadFrom.Services(sp)
                .Enrich.FromLogContext(),
            preserveStaticLogger: true);

        builder.WebHost.UseUrls(builder.Configuration["Health:Urls"] ?? "http://127.0.0.1:8077");
        builder.Services.Configure<HostOptions>(o => o.ShutdownTimeout = TimeSpan.FromSeconds(20));

        builder.AddSiloWatchPlant();
        builder.AddSiloWatchStorage();
        builder.AddSiloWatchIngest();
        builder.AddSiloWatchDemo();
        builder.AddSiloWatchAlarms();

        var app = builder.Build();
        app.MapSiloWatchHealth();
        app.MapSiloWatchStatusPage();
        return app;
    }
}
