using Microsoft.Extensions.Options;
using SiloWatch.Mechanics;
using SiloWatch.Messaging;
using SiloWatch.Monitoring.Alarms;
using SiloWatch.Monitoring.Wall;
using SiloWatch.Plant;
using SiloWatch.Service.Events;
using SiloWatch.Service.Hosting;
using SiloWatch.Service.Ingest;
using SiloWatch.Storage;

namespace SiloWatch.Service.Alarms;

/// <summary>Makes each silo's wall watch and alarm engine (restored from the journal) for the ingest, and the command router.</summary>
public sealed class SiloAlarmsFactory(
    IOptions<WallWatchOptions> wall,
    IOptions<AlarmEngineOptions> engine,
    IOptions<AlarmDefinitionOptions> definitions,
    IOptions<EvaluationOptions> evaluation,
    IOptions<CommandOptions> commands,
    IOptions<InstanceOptions> instance,
    IOptions<EventRecordingOptions> events,
    Journal journal,
    OutboundQueue outbound,
    ITimeSeriesSink sink,
    SeriesCatalog series,
    SiteAlarmCounts counts,
    ChangeSignal changed,
    TopicScheme topics,
    TimeProvider time,
    ILoggerFactory loggers)
{
    // One flood count for the whole instance: ISA-18.2 counts a flood per site, across all its silos.
    private readonly AlarmFloodTracker _floods = new(engine.Value);

    public EvaluationOptions Evaluation => evaluation.Value;

    /// <summary>The flood count of every site, shared by the silos' engines (read by the status page's site rows).</summary>
    public AlarmFloodTracker Floods => _floods;

    public SiloAlarms Create(SiloRef silo, SiloModel model)
    {
        ArgumentNullException.ThrowIfNull(silo);
        var context = new SiloAlarmsContext(journal, outbound, sink, series, counts, changed, topics, time, instance.Value.Id,
            loggers.CreateLogger("SiloWatch.Service.Alarms.SiloAlarms"))
        {
            Floods = _floods,
        };
        var recorder = new DischargeEventRecorder(silo, model, events.Value, wall.Value, new DischargeEventContext(journal, outbound,
            topics.Events(silo.SiteId, silo.SiloId), instance.Value.Id, loggers.CreateLogger<DischargeEventRecorder>()));
        var alarms = new SiloAlarms(silo, new WallWatch(silo, model, wall.Value), AlarmDefinitions.ForSilo(silo, model, definitions.Value),
            engine.Value, evaluation.Value, context, recorder);
        alarms.Restore();
        return alarms;
    }

    public AlarmCommandRouter CreateRouter(IReadOnlyDictionary<string, SiloPipeline> pipelines) =>
        new(pipelines, topics, commands.Value, outbound, time, instance.Value.Id, loggers.CreateLogger<AlarmCommandRouter>());
}
