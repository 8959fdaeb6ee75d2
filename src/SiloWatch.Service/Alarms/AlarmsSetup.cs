using SiloWatch.Monitoring.Alarms;
using SiloWatch.Monitoring.Wall;
using SiloWatch.Service.Alarms;
using SiloWatch.Service.Events;
using SiloWatch.Service.StatusPage;

namespace SiloWatch.Service.Hosting;

/// <summary>
/// Wall watch, alarms, operator commands and the status page. Sections: WallWatch, Alarms
/// (engine; Alarms:Definitions for delays and deadbands), Evaluation, Events (discharge event records), Commands, StatusPage.
/// </summary>
public static class AlarmsSetup
{
    public static IHostApplicationBuilder AddSiloWatchAlarms(this IHostApplicationBuilder builder)
    {
        ArgumentNullException.ThrowIfNull(builder);
        var services = builder.Services;
        var config = builder.Configuration;
        services.AddOptions<WallWatchOptions>().Bind(config.GetSection(WallWatchOptions.SectionName)).ValidateDataAnnotations().ValidateOnStart();
        services.AddOptions<AlarmEngineOptions>().Bind(config.GetSection(AlarmEngineOptions.SectionName));
        services.AddOptions<AlarmDefinitionOptions>().Bind(config.GetSection(AlarmEngineOptions.SectionName + ":Definitions"));
        services.AddOptions<EvaluationOptions>().Bind(config.GetSection(EvaluationOptions.SectionName)).ValidateOnStart();
        services.AddOptions<EventRecordingOptions>().Bind(config.GetSection(EventRecordingOptions.SectionName)).ValidateDataAnnotations().ValidateOnStart();
        services.AddOptions<CommandOptions>().Bind(config.GetSection(CommandOptions.SectionName)).ValidateDataAnnotations().ValidateOnStart();
        services.AddSingleton<SiteAlarmCounts>();
        services.AddSingleton<ChangeSignal>();
        services.AddSingleton<SiloAlarmsFactory>();
        StatusPageEndpoints.AddServices(builder);
        return builder;
    }

    /// <summary>The status page and the alarm API on the health host.</summary>
    public static WebApplication MapSiloWatchStatusPage(this WebApplication app) => StatusPageEndpoints.Map(app);
}
