using Microsoft.Extensions.Options;
using SiloWatch.Plant;
using SiloWatch.Storage;

namespace SiloWatch.Service.Hosting;

/// <summary>Storage: the time-series sink (InfluxDB v2 API, or the embedded SQLite file by default) and the journal.</summary>
public static class StorageSetup
{
    public static IHostApplicationBuilder AddSiloWatchStorage(this IHostApplicationBuilder builder)
    {
        var services = builder.Services;
        services.AddOptions<StorageOptions>()
            .Bind(builder.Configuration.GetSection(StorageOptions.SectionName))
            .PostConfigure<IHostEnvironment>((o, env) =>
            {
                // Relative data paths live under the content root (the working directory).
                o.EmbeddedPath = Rooted(env, o.EmbeddedPath);
                o.JournalPath = Rooted(env, o.JournalPath);
                if (o.TimeSeries.SpoolDirectory.Length > 0)
                {
                    o.TimeSeries.SpoolDirectory = Rooted(env, o.TimeSeries.SpoolDirectory);
                }
            })
            .ValidateOnStart();
        services.AddSingleton<IValidateOptions<StorageOptions>, StorageOptionsValidator>();
        services.AddSingleton(sp =>
        {
            var options = sp.GetRequiredService<IOptions<StorageOptions>>().Value;
            EnsureFolder(options.EmbeddedPath);
            if (options.TimeSeries.SpoolDirectory.Length > 0)
            {
                Directory.CreateDirectory(options.TimeSeries.SpoolDirectory);
            }

            return TimeSeriesSinkFactory.Create(options, sp.GetRequiredService<TimeProvider>(), sp.GetRequiredService<ILoggerFactory>());
        });
        services.AddSingleton(sp => new SeriesCatalog(sp.GetRequiredService<PlantRegistry>()));
        services.AddSingleton(sp =>
        {
            var options = sp.GetRequiredService<IOptions<StorageOptions>>().Value;
            EnsureFolder(options.JournalPath);
            return new Journal(options.JournalPath, sp.GetRequiredService<TimeProvider>(), sp.GetRequiredService<ILogger<Journal>>());
        });
        return builder;
    }

    private static string Rooted(IHostEnvironment env, string path) =>
        Path.IsPathRooted(path) ? path : Path.Combine(env.ContentRootPath, path);

    private static void EnsureFolder(string file)
    {
        var folder = Path.GetDirectoryName(file);
        if (!string.IsNullOrEmpty(folder))
        {
            Directory.CreateDirectory(folder);
        }
    }
}
