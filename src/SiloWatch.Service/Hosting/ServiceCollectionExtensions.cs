using Microsoft.Extensions.Options;
using SiloWatch.Mechanics;
using SiloWatch.Messaging;
using SiloWatch.Monitoring;
using SiloWatch.Plant;
using SiloWatch.Service.Demo;
using SiloWatch.Service.Health;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Service.Hosting;

/// <summary>One extension per concern, each owning its configuration section.</summary>
public static class ServiceCollectionExtensions
{
    /// <summary>Resolves a configured path: absolute, under the content root, or beside the executable (config/ is copied there).</summary>
    public static string ResolvePath(this IHostEnvironment env, string path)
    {
        if (Path.IsPathRooted(path))
        {
            return path;
        }

        var underRoot = Path.Combine(env.ContentRootPath, path);
        if (File.Exists(underRoot))
        {
            return underRoot;
        }

        var besideExe = Path.Combine(AppContext.BaseDirectory, path);
        return File.Exists(besideExe) ? besideExe : underRoot;
    }

    /// <summary>Loads and validates the plant definition and the material library; findings stop start-up.</summary>
    public static IHostApplicationBuilder AddSiloWatchPlant(this IHostApplicationBuilder builder)
    {
        var section = builder.Configuration.GetSection(InstanceOptions.SectionName);
        builder.Services.AddOptions<InstanceOptions>().Bind(section).ValidateDataAnnotations().ValidateOnStart();
        builder.Services.AddSingleton<IValidateOptions<InstanceOptions>, InstanceOptionsValidator>();
        var instance = section.Get<InstanceOptions>() ?? new InstanceOptions();

        var materialsPath = builder.Environment.ResolvePath(instance.MaterialsFile);
        MaterialLibrary materials;
        try
        {
            materials = MaterialLibrary.Load(materialsPath);
        }
        catch (Exception ex) when (ex is IOException or FormatException or System.Text.Json.JsonException or InvalidDataException or ArgumentException)
        {
            throw new PlantDefinitionException(materialsPath, [new PlantFinding("", "", "", "Instance:MaterialsFile", materialsPath, ex.Message)]);
        }

        var plantPath = builder.Environment.ResolvePath(instance.PlantFile);
        var (plant, findings) = PlantLoader.LoadFile(plantPath, materials.Names);
        if (findings.Count > 0)
        {
            throw new PlantDefinitionException(plantPath, findings);
        }

        var registry = new PlantRegistry(plant);
        var shard = new ShardMap(registry, instance);
        if (shard.Unknown.Count > 0)
        {
            throw new PlantDefinitionException(plantPath,
                [.. shard.Unknown.Select(k => new PlantFinding("", "", "", "Instance:Silos", k, "no such site/silo in the plant definition"))]);
        }

        builder.Services.AddSingleton(materials);
        builder.Services.AddSingleton(registry);
        builder.Services.AddSingleton(shard);
        builder.Services.AddSingleton(new SiloModels(registry, materials));
        builder.Services.TryAddTimeProvider();
        return builder;
    }

    /// <summary>MQTT (embedded broker when none is configured), ingest, outbound publishing.</summary>
    public static IHostApplicationBuilder AddSiloWatchIngest(this IHostApplicationBuilder builder)
    {
        var services = builder.Services;
        services.AddOptions<MqttOptions>().Bind(builder.Configuration.GetSection(MqttOptions.SectionName)).ValidateOnStart();
        services.AddSingleton<IValidateOptions<MqttOptions>, MqttOptionsValidator>();
        services.AddOptions<EmbeddedBrokerOptions>().Bind(builder.Configuration.GetSection(EmbeddedBrokerOptions.SectionName));
        services.AddOptions<TelemetryDecoderOptions>().Bind(builder.Configuration.GetSection("Decoder"));
        services.AddOptions<MonitoringOptions>().Bind(builder.Configuration.GetSection(MonitoringOptions.SectionName));
        services.AddSingleton<BrokerEndpoint>();
        services.AddSingleton<IngestCounters>();
        services.AddSingleton<PublishRefusals>();
        services.AddSingleton(sp => new OutboundQueue(sp.GetRequiredService<IngestCounters>()));
        services.AddSingleton(sp => new TopicScheme(sp.GetRequiredService<IOptions<MqttOptions>>().Value.TopicPrefix));
        services.AddSingleton(sp => new TelemetryIngest(
            sp.GetRequiredService<PlantRegistry>(),
            sp.GetRequiredService<ShardMap>(),
            sp.GetRequiredService<SiloModels>(),
            sp.GetRequiredService<IOptions<MonitoringOptions>>().Value,
            sp.GetRequiredService<IOptions<TelemetryDecoderOptions>>().Value,
            sp.GetRequiredService<TopicScheme>(),
            sp.GetRequiredService<IngestCounters>(),
            sp.GetRequiredService<OutboundQueue>(),
            sp.GetRequiredService<IOptions<InstanceOptions>>().Value,
            sp.GetRequiredService<SiloWatch.Storage.ITimeSeriesSink>(),
            sp.GetRequiredService<SiloWatch.Storage.SeriesCatalog>(),
            sp.GetRequiredService<SiloWatch.Storage.Journal>(),
            sp.GetRequiredService<TimeProvider>(),
            sp.GetRequiredService<ILogger<TelemetryIngest>>(),
            sp.GetService<SiloWatch.Service.Alarms.SiloAlarmsFactory>()));

        // Start order = registration order; stop runs in reverse (the broker goes last).
        services.AddHostedService<EmbeddedBrokerService>();
        services.AddSingleton<TelemetryBridgeService>();
        services.AddHostedService(sp => sp.GetRequiredService<TelemetryBridgeService>());
        services.AddHostedService<SiloSummaryLogService>();
        services.AddHostedService<SiloWatch.Service.Health.IngestLagWatch>();
        return builder;
    }

    /// <summary>The demo: the plant simulator publishing into the (embedded) broker. Section "Demo".</summary>
    public static IHostApplicationBuilder AddSiloWatchDemo(this IHostApplicationBuilder builder)
    {
        builder.Services.AddOptions<DemoOptions>().Bind(builder.Configuration.GetSection(DemoOptions.SectionName));
        builder.Services.AddHostedService<DemoSimulatorService>();
        return builder;
    }

    private static void TryAddTimeProvider(this IServiceCollection services)
    {
        if (!services.Any(d => d.ServiceType == typeof(TimeProvider)))
        {
            services.AddSingleton(TimeProvider.System);
        }
    }
}
