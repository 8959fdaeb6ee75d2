using System.Collections.Concurrent;
using System.Text.Json;
using System.Text.Json.Serialization;
using MQTTnet.Protocol;
using SiloWatch.Monitoring;
using SiloWatch.Monitoring.Alarms;
using SiloWatch.Monitoring.Wall;
using SiloWatch.Plant;
using SiloWatch.Service.Events;
using SiloWatch.Service.Ingest;
using SiloWatch.Storage;

namespace SiloWatch.Service.Alarms;

/// <summary>
/// The wall watch and the alarm engine of one silo, with their journal, topics and series.
/// <para>
/// The wall watch is fed and evaluated by the silo's worker only (<see cref="OnSample"/> is the hot
/// path: no allocation, no lock). The alarm engine is shared with operator commands from the MQTT
/// callback and the HTTP API, so every call to it, and the journal entries and messages of its
/// transitions, happen under one small lock per silo; commands are rare, so it is hardly ever contended.
/// A tare needs the inventory monitor, which only the worker may touch: it is queued for the worker.
/// </para>
/// </summary>
public sealed class SiloAlarms
{
    public const string AlarmSnapshotKind = "alarms";
    public const string WallSnapshotKind = "wall";
    public const string MonitorSnapshotKind = TelemetryIngest.MonitorSnapshotKind;

    internal static readonly JsonSerializerOptions SnapshotJson = new()
    {
        NumberHandling = JsonNumberHandling.AllowNamedFloatingPointLiterals,
        Converters = { new JsonStringEnumConverter() },
    };

    private readonly Lock _gate = new();
    private readonly SiloRef _silo;
    private readonly WallWatch _wall;
    private readonly AlarmEngine _engine;
    private readonly SiloClock _clock;
    private readonly TimeProvider _time;
    private readonly Journal _journal;
    private readonly OutboundQueue _outbound;
    private readonly ITimeSeriesSink _sink;
    private readonly SeriesCatalog _series;
    private readonly SiteAlarmCounts _counts;
    private readonly ChangeSignal _changed;
    private readonly ILogger _logger;
    private readonly string _instanceId;
    private readonly string _eventsTopic;
    private readonly string _alarmsTopic;
    private readonly SensorKind[] _kinds;
    private readonly int[] _temperatureOf;
    private readonly long[] _lastMs;
    private readonly SeriesKey?[] _ringSeries;
    private readonly long _countIntervalMs;
    private readonly ConcurrentQueue<AlarmCommand> _forWorker = new();
    private readonly DischargeEventRecorder _events;
    private string _publishedSignature = "\0";
    private long _publishedMs = long.MinValue;
    private (int, int, int) _lastCounts = (-1, -1, -1);
    private long _countsWrittenMs = long.MinValue;
    private SiloStatus _status;

    public SiloAlarms(SiloRef silo, WallWatch wall, IReadOnlyList<AlarmDefinition> definitions, AlarmEngineOptions engineOptions,
        EvaluationOptions evaluation, SiloAlarmsContext context, DischargeEventRecorder events)
    {
        ArgumentNullException.ThrowIfNull(silo);
        ArgumentNullException.ThrowIfNull(context);
        ArgumentNullException.ThrowIfNull(events);
        _silo = silo;
        _wall = wall;
        _events = events;
        _time = context.Time;
        _clock = new SiloClock(_time.GetUtcNow().ToUnixTimeMilliseconds());
        _engine = new AlarmEngine(definitions, _clock, engineOptions, context.Floods);
        _journal = context.Journal;
        _outbound = context.Outbound;
        _sink = context.Sink;
        _series = context.Series;
        _counts = context.Counts;
        _changed = context.Changed;
        _logger = context.Logger;
        _instanceId = context.InstanceId;
        _eventsTopic = context.Topics.Events(silo.SiteId, silo.SiloId);
        _alarmsTopic = context.Topics.Alarms(silo.SiteId, silo.SiloId);
        FollowSamples = evaluation.Clock == EvaluationClock.Samples;
        SampleIntervalMs = Math.Max(1, (long)evaluation.SampleInterval.TotalMilliseconds);
        _countIntervalMs = Math.Max(1000, (long)evaluation.AlarmCountInterval.TotalMilliseconds);

        var sensors = silo.Sensors;
        _kinds = [.. sensors.Select(s => s.Options.Kind)];
        _temperatureOf = [.. sensors.Select(s =>
            s.Options.TemperatureSensor.Length > 0 && silo.TryGetSensor(s.Options.TemperatureSensor, out var t) && t.Options.Kind == SensorKind.Temperature ? t.Index : -1)];
        _lastMs = [.. sensors.Select(_ => long.MinValue)];
        _ringSeries = [.. wall.Rings.Select(r => context.Series.TryGetRing(silo.Index, r, out var key) ? key : null)];
        _status = new SiloStatus(silo.SiteId, silo.SiloId, silo.Options.Name, 0, null, DischargeState.Idle, [], []);
    }

    public SiloRef Silo => _silo;

    /// <summary>This instance's id, carried in every message.</summary>
    public string InstanceId => _instanceId;

    /// <summary>Evaluate at the samples' own time (replays), not the wall clock.</summary>
    public bool FollowSamples { get; }

    /// <summary>Evaluation step in sample time when <see cref="FollowSamples"/>.</summary>
    public long SampleIntervalMs { get; }

    /// <summary>The last evaluation, for the status page (replaced whole, never changed in place).</summary>
    public SiloStatus Status => Volatile.Read(ref _status);

    /// <summary>Every alarm definition of the silo.</summary>
    public IReadOnlyList<AlarmDefinition> Definitions => _engine.Definitions;

    /// <summary>The active alarms now (thread-safe).</summary>
    public IReadOnlyList<AlarmState> Active
    {
        get
        {
            lock (_gate)
            {
                return _engine.Active;
            }
        }
    }

    /// <summary>One good or bad sample reached the monitor: pass its converted value and quality on. Worker only; no allocation.</summary>
    public void OnSample(SiloMonitor monitor, int sensorIndex, long tsMs)
    {
        if ((uint)sensorIndex >= (uint)_lastMs.Length)
        {
            return;
        }

        if (tsMs > _lastMs[sensorIndex])
        {
            _lastMs[sensorIndex] = tsMs;
        }

        Feed(monitor, sensorIndex, tsMs, tsMs);
    }

    /// <summary>
    /// Evaluates the wall and the alarms at <paramref name="nowMs"/> with the estimate of the same moment. Worker only.
    /// Staleness (a sensor's quality, a gauge or cell too old to use) is judged at the time up to which the
    /// silo's arrivals have been seen (<see cref="SiloMonitor.ArrivalsSeenUntil"/>): a backlog of the silo's
    /// messages in the service raises no sensor-bad alarm, a sensor or gateway that stopped still does.
    /// </summary>
    public void Evaluate(SiloMonitor monitor, long nowMs, InventoryEstimate estimate)
    {
        // A sensor that has fallen silent sends nothing: judge every sensor again at this moment.
        var seenMs = monitor.ArrivalsSeenUntil(nowMs);
        for (var i = 0; i < _lastMs.Length; i++)
        {
            if (_lastMs[i] == long.MinValue)
            {
                _wall.OnValue(i, 0, double.NaN, monitor.SensorFlags(i, seenMs).Severity());
            }
            else
            {
                Feed(monitor, i, _lastMs[i], seenMs);
            }
        }

        RunWorkerCommands(monitor, nowMs);
        var assessment = _wall.Evaluate(nowMs, estimate, seenMs);
        IReadOnlyList<RingStatus> rings = [.. assessment.Rings.Select(r => new RingStatus(r.Ring, r.GoodGauges, r.Gauges, r.A1Ratio, r.AsymmetryDirectionDeg, r.MeasuredOverExpected, r.Note))];
        IReadOnlyList<AlarmState> active;
        lock (_gate)
        {
            _clock.Set(nowMs);
            var transitions = _engine.Evaluate(assessment.Conditions);
            active = _engine.Active;
            Record(transitions, active, nowMs, force: false);

            // Written under the lock, as a command's update is, so an older list never overwrites a newer one.
            Volatile.Write(ref _status, new SiloStatus(_silo.SiteId, _silo.SiloId, _silo.Options.Name, nowMs, estimate, assessment.State, rings, active));
        }

        OnDischarge(assessment);
        _events.OnEvaluated(monitor, assessment, estimate, nowMs);
        WriteSeries(assessment, active, nowMs);
        _changed.Notify();
    }

    /// <summary>
    /// Carries out an operator command (any thread). A tare is queued for the worker and answered
    /// when it has run: the result is then null here.
    /// </summary>
    public CommandOutcome? Execute(AlarmCommand command)
    {
        ArgumentNullException.ThrowIfNull(command);
        if (command.Action == AlarmCommand.Tare)
        {
            _forWorker.Enqueue(command);
            return null;
        }

        lock (_gate)
        {
            var nowMs = FollowSamples ? _clock.NowMs : _time.GetUtcNow().ToUnixTimeMilliseconds();
            _clock.Set(nowMs);
            AlarmState before;
            AlarmTransition? t;
            try
            {
                before = _engine.Get(command.AlarmId);
                var comment = command.Comment.Length > 0 ? command.Comment : null;
                t = command.Action switch
                {
                    AlarmCommand.Acknowledge => _engine.Acknowledge(command.AlarmId, command.User, comment),
                    AlarmCommand.Shelve => _engine.Shelve(command.AlarmId, command.User, command.Duration ?? TimeSpan.Zero, command.Reason),
                    AlarmCommand.Unshelve => _engine.Unshelve(command.AlarmId, command.User),
                    AlarmCommand.Reset => _engine.Reset(command.AlarmId, command.User),
                    AlarmCommand.OutOfService => _engine.SetOutOfService(command.AlarmId, command.User, true, comment),
                    AlarmCommand.ReturnToService => _engine.SetOutOfService(command.AlarmId, command.User, false, comment),
                    _ => throw new ArgumentException($"unknown action '{command.Action}'"),
                };
            }
            catch (KeyNotFoundException)
            {
                return CommandOutcome.Refused($"silo {_silo.Key} has no alarm '{command.AlarmId}'", command);
            }
            catch (ArgumentException ex)
            {
                return CommandOutcome.Refused(ex.Message, command);
            }

            if (t is null)
            {
                var why = command.Action == AlarmCommand.Reset && before.State == AlarmStateName.Latched
                    ? "its condition is still in alarm"
                    : $"it is {AlarmPayloads.StateName(before.State)}";
                return CommandOutcome.Refused($"nothing to {command.Action}: {why}", command);
            }

            var active = _engine.Active;
            Record([t], active, nowMs, force: true);
            Volatile.Write(ref _status, _status with { Alarms = active });
            _changed.Notify();
            return CommandOutcome.Done($"{AlarmPayloads.StateName(t.From)} -> {AlarmPayloads.StateName(t.To)}", command);
        }
    }

    /// <summary>Publishes an answer to a command on the silo's events topic.</summary>
    public void Answer(CommandOutcome outcome)
    {
        var nowMs = FollowSamples ? _clock.NowMs : _time.GetUtcNow().ToUnixTimeMilliseconds();
        _outbound.Enqueue(new OutboundMessage(_eventsTopic, AlarmPayloads.CommandResult(outcome, _silo.SiteId, _silo.SiloId, nowMs, _instanceId),
            Retain: false, MqttQualityOfServiceLevel.AtLeastOnce));
    }

    /// <summary>Restores alarm states and the wall watch from the journal (before the workers start).</summary>
    public void Restore()
    {
        var alarms = _journal.LoadSnapshot(_silo.Key, AlarmSnapshotKind);
        if (alarms is not null)
        {
            try
            {
                var snapshot = JsonSerializer.Deserialize<AlarmSnapshot>(alarms, SnapshotJson);
                if (snapshot is not null)
                {
                    lock (_gate)
                    {
                        _clock.Set(snapshot.TakenMs);
                        foreach (var problem in _engine.Restore(snapshot))
                        {
                            _logger.LogWarning("Restoring the alarms of {Silo}: {Problem}", _silo.Key, problem);
                        }
                    }

                    _logger.LogInformation("Restored the alarm states of {Silo} from {Taken}", _silo.Key, DateTimeOffset.FromUnixTimeMilliseconds(snapshot.TakenMs));
                }
            }
            catch (Exception ex) when (ex is JsonException or NotSupportedException or ArgumentException)
            {
                _logger.LogWarning(ex, "Alarm snapshot of {Silo} could not be read; its alarms start from normal", _silo.Key);
            }
        }

        var wall = _journal.LoadSnapshot(_silo.Key, WallSnapshotKind);
        if (wall is not null)
        {
            try
            {
                var snapshot = JsonSerializer.Deserialize<WallSnapshot>(wall, SnapshotJson);
                if (snapshot is not null)
                {
                    foreach (var problem in _wall.Restore(snapshot))
                    {
                        _logger.LogWarning("Restoring the wall watch of {Silo}: {Problem}", _silo.Key, problem);
                    }
                }
            }
            catch (Exception ex) when (ex is JsonException or NotSupportedException or ArgumentException)
            {
                _logger.LogWarning(ex, "Wall snapshot of {Silo} could not be read; the wall watch starts afresh", _silo.Key);
            }
        }

        _events.Restore();
        lock (_gate)
        {
            _status = _status with { Alarms = _engine.Active };
        }
    }

    /// <summary>Saves alarm states and the wall watch (at stop, from the worker).</summary>
    public void SaveSnapshots(long nowMs)
    {
        lock (_gate)
        {
            SaveAlarmSnapshot();
        }

        _journal.SaveSnapshot(_silo.Key, WallSnapshotKind, JsonSerializer.Serialize(_wall.Snapshot(nowMs), SnapshotJson));
    }

    private void Feed(SiloMonitor monitor, int i, long tsMs, long judgeMs)
    {
        var quality = monitor.SensorFlags(i, judgeMs).Severity();
        var value = monitor.LastValue(i);
        switch (_kinds[i])
        {
            case SensorKind.AxialStrain or SensorKind.HoopStrain:
                var t = _temperatureOf[i];
                var temperatureC = t >= 0 && monitor.SensorFlags(t, judgeMs).Severity() != Quality.Bad ? monitor.LastValue(t) : double.NaN;
                _wall.OnGauge(i, tsMs, value, temperatureC, quality);
                break;
            case SensorKind.LoadCell:
                _wall.OnLoadCell(i, tsMs, value, quality);
                break;
            case SensorKind.Outlet:
                _wall.OnOutlet(i, tsMs, value, quality);
                break;
            default:
                _wall.OnValue(i, tsMs, value, quality);
                break;
        }
    }

    private void RunWorkerCommands(SiloMonitor monitor, long nowMs)
    {
        while (_forWorker.TryDequeue(out var command))
        {
            CommandOutcome outcome;
            try
            {
                var before = monitor.LastTare;
                var tare = monitor.Tare(command.User, nowMs);
                _wall.ApplyTare(tare);
                _journal.AppendTare(new Storage.TareRecord(nowMs, _silo.SiteId, _silo.SiloId,
                    double.IsFinite(tare.MassBeforeKg) ? tare.MassBeforeKg : 0, before is null ? 0 : double.IsFinite(before.MassBeforeKg) ? before.MassBeforeKg : 0,
                    command.User, command.Comment.Length > 0 ? command.Comment : command.Reason));
                _journal.SaveSnapshot(_silo.Key, MonitorSnapshotKind, JsonSerializer.Serialize(monitor.Snapshot(), SnapshotJson));
                _journal.SaveSnapshot(_silo.Key, WallSnapshotKind, JsonSerializer.Serialize(_wall.Snapshot(nowMs), SnapshotJson));
                outcome = CommandOutcome.Done($"tared {tare.Values.Count} sensor(s); the contents shown before were {tare.MassBeforeKg:0} kg", command);
                _logger.LogInformation("{Silo} tared by {User}", _silo.Key, command.User);
            }
            catch (InvalidOperationException ex)
            {
                outcome = CommandOutcome.Refused(ex.Message, command);
                _logger.LogWarning("Tare of {Silo} by {User} refused: {Problem}", _silo.Key, command.User, ex.Message);
            }

            Answer(outcome);
        }
    }

    // Under _gate.
    private void Record(IReadOnlyList<AlarmTransition> transitions, IReadOnlyList<AlarmState> active, long nowMs, bool force)
    {
        foreach (var t in transitions)
        {
            var message = t.Comment.Length > 0 ? $"{t.Message} [{t.Comment}]" : t.Message;
            try
            {
                _journal.AppendAlarmTransition(new AlarmTransitionRecord(t.TimestampMs, t.SiteId, t.SiloId.Length > 0 ? t.SiloId : _silo.SiloId, t.AlarmId,
                    AlarmPayloads.StateName(t.From), AlarmPayloads.StateName(t.To), t.Priority, t.Value ?? double.NaN, t.Setpoint, message, t.By));
            }
            catch (Exception ex) when (ex is Microsoft.Data.Sqlite.SqliteException or ObjectDisposedException or InvalidOperationException)
            {
                _logger.LogError(ex, "Journaling alarm transition {Alarm} {From} -> {To} failed", t.AlarmId, t.From, t.To);
            }

            if (!t.DuringFlood)
            {
                _outbound.Enqueue(new OutboundMessage(_eventsTopic, AlarmPayloads.Transition(t, _instanceId), Retain: false, MqttQualityOfServiceLevel.AtLeastOnce));
            }

            if (t.To == AlarmStateName.Unacknowledged || t.By != AlarmEngine.System)
            {
                _logger.LogWarning("Alarm {Alarm} {From} -> {To} by {User}, value {Value} {Unit} (setpoint {Setpoint}) {Comment}",
                    t.AlarmId, t.From, t.To, t.By, t.Value, t.Unit, t.Setpoint, t.Comment);
            }
        }

        if (transitions.Count > 0)
        {
            SaveAlarmSnapshot();
        }

        // The retained list: on every change of states, and now and then for fresh values.
        var signature = string.Join('|', active.Select(a => $"{a.AlarmId}:{a.State}:{a.Acknowledged}"));
        if (force || signature != _publishedSignature || (active.Count > 0 && nowMs - _publishedMs >= 10_000))
        {
            _publishedSignature = signature;
            _publishedMs = nowMs;
            _outbound.Enqueue(new OutboundMessage(_alarmsTopic, AlarmPayloads.Active(_silo.SiteId, _silo.SiloId, nowMs, active, _instanceId),
                Retain: true, MqttQualityOfServiceLevel.AtLeastOnce));
        }
    }

    private void SaveAlarmSnapshot()
    {
        try
        {
            _journal.SaveSnapshot(_silo.Key, AlarmSnapshotKind, JsonSerializer.Serialize(_engine.Snapshot(), SnapshotJson));
        }
        catch (Exception ex) when (ex is Microsoft.Data.Sqlite.SqliteException or ObjectDisposedException or InvalidOperationException)
        {
            _logger.LogError(ex, "Saving the alarm snapshot of {Silo} failed", _silo.Key);
        }
    }

    private void OnDischarge(WallAssessment a)
    {
        if (a.StateChange is { } change)
        {
            _outbound.Enqueue(new OutboundMessage(_eventsTopic, AlarmPayloads.DischargeState(_silo.SiteId, _silo.SiloId, change, a.MassKg, _instanceId),
                Retain: false, MqttQualityOfServiceLevel.AtLeastOnce));
            _journal.SaveSnapshot(_silo.Key, WallSnapshotKind, JsonSerializer.Serialize(_wall.Snapshot(a.TimestampMs), SnapshotJson));
        }
    }

    private void WriteSeries(WallAssessment a, IReadOnlyList<AlarmState> active, long nowMs)
    {
        for (var r = 0; r < a.Rings.Count && r < _ringSeries.Length; r++)
        {
            if (_ringSeries[r] is not { } key)
            {
                continue;
            }

            var h = a.Rings[r].StrainMicro;
            Span<double> fields =
            [
                h.Count > 0 ? h[0].Cos : double.NaN,
                h.Count > 1 ? h[1].Amplitude : double.NaN,
                h.Count > 1 ? h[1].DirectionDeg : double.NaN,
                h.Count > 2 ? h[2].Amplitude : double.NaN,
                h.Count > 2 ? h[2].DirectionDeg : double.NaN,
            ];
            _sink.Write(key, nowMs, fields);
        }

        int activeCount = 0, unacked = 0, shelved = 0;
        foreach (var s in active)
        {
            if (s.State == AlarmStateName.Shelved)
            {
                shelved++;
                continue;
            }

            if (s.State is AlarmStateName.OutOfService)
            {
                continue;
            }

            activeCount++;
            if (!s.Acknowledged)
            {
                unacked++;
            }
        }

        var counts = (activeCount, unacked, shelved);
        if (counts != _lastCounts || nowMs - _countsWrittenMs >= _countIntervalMs)
        {
            _lastCounts = counts;
            _countsWrittenMs = nowMs;
            var site = _counts.Update(_silo.SiteId, _silo.SiloId, activeCount, unacked, shelved);
            Span<double> fields = [site.Active, site.Unacknowledged, site.Shelved];
            _sink.Write(_series.Alarms(_silo.SiteId), nowMs, fields);
        }
    }
}

/// <summary>The shared parts every silo's alarms use.</summary>
public sealed record SiloAlarmsContext(
    Journal Journal,
    OutboundQueue Outbound,
    ITimeSeriesSink Sink,
    SeriesCatalog Series,
    SiteAlarmCounts Counts,
    ChangeSignal Changed,
    SiloWatch.Messaging.TopicScheme Topics,
    TimeProvider Time,
    string InstanceId,
    ILogger Logger)
{
    /// <summary>The flood count of every site, shared by the silos' engines (null: each engine counts its own).</summary>
    public AlarmFloodTracker? Floods { get; init; }
}
