using MQTTnet.Protocol;
using SiloWatch.Messaging;
using SiloWatch.Monitoring;
using SiloWatch.Plant;
using SiloWatch.Service.Alarms;
using SiloWatch.Storage;

namespace SiloWatch.Service.Ingest;

/// <summary>
/// Everything one silo owns: its decoder (with the sequence state of its publishers), its monitor
/// (conversion, quality, estimate), its wall watch and alarms, and its last estimate. Touched by one
/// worker loop only, except the alarm engine, which <see cref="SiloAlarms"/> guards for operator commands.
/// </summary>
public sealed class SiloPipeline : ITelemetryReceiver
{
    private readonly TelemetryDecoder _decoder;
    private readonly IngestCounters _counters;
    private readonly OutboundQueue _outbound;
    private readonly RateLimitedLog _rejectLog;
    private readonly string _deadLetterTopic;
    private readonly string _stateTopic;
    private readonly ITimeSeriesSink _sink;
    private readonly SeriesCatalog _series;
    private long _receivedMs;
    private long _newestSampleMs = long.MinValue;
    private long _lastEvaluatedMs = long.MinValue;
    private long _nextSampleEvaluationMs = long.MinValue;

    public SiloPipeline(SiloRef silo, SiloMonitor monitor, TelemetryDecoderOptions decoderOptions, TopicScheme topics,
        IngestCounters counters, OutboundQueue outbound, RateLimitedLog rejectLog, ITimeSeriesSink sink, SeriesCatalog series)
    {
        _sink = sink;
        _series = series;
        Silo = silo;
        Monitor = monitor;
        _decoder = new TelemetryDecoder(silo, decoderOptions);
        _counters = counters;
        _outbound = outbound;
        _rejectLog = rejectLog;
        _deadLetterTopic = topics.DeadLetter(silo.SiteId, silo.SiloId);
        _stateTopic = topics.State(silo.SiteId, silo.SiloId);
        monitor.TrackArrivals(() => Queued > 0); // staleness judged against arrival, not against this silo's backlog
        if (sink is IIdleIntervalClose idle)
        {
            // This silo's worker knows when its feed is idle (nothing queued, nothing processed for a while);
            // a wall-clock timer would also close the intervals of a worker stalled with messages queued.
            _idleClose = idle;
            foreach (var sensor in silo.Sensors)
            {
                idle.CloseIdleByCaller(series.Sensor(silo.Index, sensor.Index));
            }

            idle.CloseIdleByCaller(series.Estimate(silo.Index));
        }
    }

    private readonly IIdleIntervalClose? _idleClose;
    private int _queued;

    /// <summary>Messages of this silo routed to its worker's queue and not yet processed (any thread).</summary>
    public int Queued => Volatile.Read(ref _queued);

    /// <summary>A message of this silo is on its way to the worker's queue (the receive callback, before writing it).</summary>
    public void Enqueuing() => Interlocked.Increment(ref _queued);

    /// <summary>A message counted by <see cref="Enqueuing"/> was processed, dropped or not taken.</summary>
    public void Dequeued() => Interlocked.Decrement(ref _queued);

    /// <summary>When the message processed last (or being processed) was received, service clock; 0 before the first (any thread).</summary>
    public long LastReceivedMs => Volatile.Read(ref _receivedMs);

    /// <summary>The worker's clock when it last processed a message of this silo (worker only).</summary>
    internal long LastProcessedMs { get; set; } = long.MinValue;

    /// <summary>
    /// Writes the open downsampling intervals of the silo's sensors once its feed is really idle:
    /// nothing queued for it and nothing processed for two intervals of the worker's clock. Worker only.
    /// </summary>
    public void CloseIdleIntervals(long nowMs)
    {
        if (_idleClose is null || Queued > 0 || LastProcessedMs == long.MinValue)
        {
            return;
        }

        var silent = TimeSpan.FromMilliseconds(nowMs - LastProcessedMs);
        foreach (var sensor in Silo.Sensors)
        {
            _idleClose.CloseIfIdle(_series.Sensor(Silo.Index, sensor.Index), silent);
        }
    }

    public SiloRef Silo { get; }

    public SiloMonitor Monitor { get; }

    public InventoryEstimate? LastEstimate { get; private set; }

    public long SamplesAccepted { get; private set; }

    public long SamplesRejected { get; private set; }

    /// <summary>The silo's wall watch and alarm engine; null when the service runs without them.</summary>
    public SiloAlarms? Alarms { get; private set; }

    /// <summary>True when the evaluation follows the samples' own time (replays): the worker then evaluates on its publish interval only.</summary>
    public bool FollowsSampleTime => Alarms is { FollowSamples: true };

    /// <summary>True when samples reached the monitor since the last evaluation.</summary>
    public bool HasUnevaluatedSamples { get; private set; }

    /// <summary>The worker's schedule: service-clock time of the silo's last evaluation (worker only).</summary>
    internal long EvaluatedAtMs { get; set; } = long.MinValue;

    /// <summary>The worker's schedule: the silo waits for its minimum evaluation interval (worker only).</summary>
    internal bool Held { get; set; }

    /// <summary>Attaches the wall watch and alarms (before the workers start).</summary>
    public void AttachAlarms(SiloAlarms alarms) => Alarms = alarms ?? throw new ArgumentNullException(nameof(alarms));

    /// <summary>Decodes one telemetry message of this silo and feeds every good sample to the monitor.</summary>
    public void Process(ReadOnlySpan<byte> payload, long receivedMs)
    {
        Volatile.Write(ref _receivedMs, receivedMs);
        if (!FollowsSampleTime)
        {
            Monitor.OnArrival(receivedMs);
        }

        NeedsCheckpoint = true;
        var outcome = _decoder.Decode(payload, receivedMs, this);
        _counters.Sequence(outcome);
        _counters.SamplesAccepted(outcome.Accepted);
        SamplesAccepted += outcome.Accepted;
        SamplesRejected += outcome.Rejected;

        // Replays: the samples' own time drives the evaluation, one step per SampleInterval of it.
        if (Alarms is { FollowSamples: true } alarms && _newestSampleMs != long.MinValue && _newestSampleMs >= _nextSampleEvaluationMs)
        {
            Evaluate(_newestSampleMs, alarms.InstanceId);
            _nextSampleEvaluationMs = _newestSampleMs + alarms.SampleIntervalMs;
        }
    }

    /// <summary>
    /// Called by the worker each publish interval: evaluates at <paramref name="nowMs"/> (wall clock), or,
    /// when the evaluation follows the samples' time, at the newest sample if it has not been evaluated yet.
    /// </summary>
    public InventoryEstimate? Publish(long nowMs, string instanceId)
    {
        if (Alarms is { FollowSamples: true } alarms)
        {
            if (_newestSampleMs == long.MinValue || _newestSampleMs <= _lastEvaluatedMs)
            {
                return LastEstimate;
            }

            _nextSampleEvaluationMs = _newestSampleMs + alarms.SampleIntervalMs;
            return Evaluate(_newestSampleMs, instanceId);
        }

        return Evaluate(nowMs, instanceId);
    }

    /// <summary>Saves the wall and alarm snapshots (the worker calls it once it has drained its queue).</summary>
    public void SaveSnapshots(long nowMs) => Alarms?.SaveSnapshots(_lastEvaluatedMs != long.MinValue && Alarms.FollowSamples ? _lastEvaluatedMs : nowMs);

    /// <summary>Evaluates the estimate, the wall and the alarms, and queues the state for publishing (retained).</summary>
    private InventoryEstimate Evaluate(long nowMs, string instanceId)
    {
        _lastEvaluatedMs = nowMs;
        HasUnevaluatedSamples = false;
        var estimate = Monitor.Evaluate(nowMs);
        LastEstimate = estimate;
        Span<double> fields =
        [
            estimate.MassKg,
            estimate.LevelM,
            estimate.PercentFull,
            estimate.RateKgPerS,
            (estimate.MassHigh95Kg - estimate.MassLow95Kg) / (2 * 1.959964), // sigma from the 95 % interval
            (double)estimate.Quality,
        ];
        _sink.Write(_series.Estimate(Silo.Index), estimate.TimestampMs, fields);
        _outbound.EnqueueLatest(new OutboundMessage(_stateTopic, StatePayload.Encode(estimate, instanceId, _newestSampleMs == long.MinValue ? null : _newestSampleMs), Retain: true, MqttQualityOfServiceLevel.AtLeastOnce));
        Alarms?.Evaluate(Monitor, nowMs, estimate);
        return estimate;
    }

    /// <summary>When the last checkpoint saved (or restored) for this silo was taken and what it covers; null before the first.</summary>
    public CheckpointMark? LastCheckpoint { get; internal set; }

    /// <summary>True when a message was processed since the last checkpoint.</summary>
    public bool NeedsCheckpoint { get; private set; }

    /// <summary>A captured checkpoint could not be saved: the next one must capture this silo again.</summary>
    internal void CheckpointNotSaved() => NeedsCheckpoint = true;

    /// <summary>
    /// Everything needed to resume exactly after the last processed message: the monitor's snapshot,
    /// each publisher's sequence position (so a redelivery is a duplicate) and the open downsampling
    /// interval of each sensor series (so the interval is completed, not restarted).
    /// </summary>
    public IngestCheckpoint CaptureCheckpoint(long nowMs)
    {
        NeedsCheckpoint = false;
        var intervals = new Dictionary<string, OpenInterval>(StringComparer.Ordinal);
        if (_sink is IIntervalCheckpoint open)
        {
            foreach (var sensor in Silo.Sensors)
            {
                if (open.CaptureInterval(_series.Sensor(Silo.Index, sensor.Index)) is { } interval)
                {
                    intervals[sensor.Id] = interval;
                }
            }
        }

        return new IngestCheckpoint(IngestCheckpoint.CurrentVersion, nowMs, Monitor.Snapshot(), _decoder.CaptureSequences(), intervals);
    }

    /// <summary>Restores what <see cref="CaptureCheckpoint"/> saved, except the monitor (the caller picks the newest monitor snapshot).</summary>
    public IReadOnlyList<string> RestoreCheckpoint(IngestCheckpoint checkpoint)
    {
        ArgumentNullException.ThrowIfNull(checkpoint);
        var problems = new List<string>();
        LastCheckpoint = CheckpointMark.Of(checkpoint);
        _decoder.RestoreSequences(checkpoint.Sequences);
        foreach (var (sensorId, interval) in checkpoint.Intervals)
        {
            if (_sink is not IIntervalCheckpoint open)
            {
                break;
            }

            if (!Silo.TryGetSensor(sensorId.AsSpan(), out var sensor))
            {
                problems.Add($"sensor {sensorId} of the checkpoint is no longer in the plant definition: its open interval is dropped");
                continue;
            }

            try
            {
                open.RestoreInterval(_series.Sensor(Silo.Index, sensor.Index), interval);
            }
            catch (ArgumentException ex)
            {
                problems.Add($"sensor {sensorId}: {ex.Message}");
            }
        }

        return problems;
    }

    void ITelemetryReceiver.OnSample(in TelemetrySample sample)
    {
        Monitor.OnSample(sample);
        HasUnevaluatedSamples = true;
        if (sample.TimestampMs > _newestSampleMs)
        {
            _newestSampleMs = sample.TimestampMs;
        }

        Alarms?.OnSample(Monitor, sample.SensorIndex, sample.TimestampMs);
        Span<double> fields =
        [
            sample.Value,
            Monitor.LastValue(sample.SensorIndex),
            (double)Monitor.SensorFlags(sample.SensorIndex, sample.TimestampMs).Severity(),
        ];
        _sink.Write(_series.Sensor(Silo.Index, sample.SensorIndex), sample.TimestampMs, fields);
    }

    void ITelemetryReceiver.OnRejected(TelemetryRejection rejection)
    {
        _counters.Reject(rejection.Reason);
        _rejectLog.Warn(DeadLetterCodec.ReasonName(rejection.Reason), rejection.SiteId, rejection.SiloId, rejection.SensorId, rejection.Detail);
        _outbound.Enqueue(new OutboundMessage(_deadLetterTopic, DeadLetterCodec.Encode(rejection, _receivedMs), Retain: false, MqttQualityOfServiceLevel.AtLeastOnce));
        _counters.DeadLetterQueued();
    }
}

/// <summary>A silo's resume point, saved in the journal by its worker and read at start-up.</summary>
public sealed record IngestCheckpoint(
    int Version,
    long TakenMs,
    MonitorSnapshot Monitor,
    IReadOnlyList<PublisherPosition> Sequences,
    IReadOnlyDictionary<string, OpenInterval> Intervals)
{
    public const int CurrentVersion = 1;
}
