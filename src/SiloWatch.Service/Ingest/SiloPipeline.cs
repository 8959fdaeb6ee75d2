using MQTTnet.Protocol;
using SiloWatch.Messaging;
using SiloWatch.Monitoring;
using SiloWatch.Plant;
using SiloWatch.Storage;

namespace SiloWatch.Service.Ingest;

/// <summary>
/// Everything one silo owns: its decoder (with the sequence state of its publishers), its monitor
/// (conversion, quality, estimate) and its last estimate. Touched by one worker loop only.
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
    }

    public SiloRef Silo { get; }

    public SiloMonitor Monitor { get; }

    public InventoryEstimate? LastEstimate { get; private set; }

    public long SamplesAccepted { get; private set; }

    public long SamplesRejected { get; private set; }

    /// <summary>Decodes one telemetry message of this silo and feeds every good sample to the monitor.</summary>
    public void Process(ReadOnlySpan<byte> payload, long receivedMs)
    {
        _receivedMs = receivedMs;
        var outcome = _decoder.Decode(payload, receivedMs, this);
        _counters.Sequence(outcome);
        _counters.SamplesAccepted(outcome.Accepted);
        SamplesAccepted += outcome.Accepted;
        SamplesRejected += outcome.Rejected;
    }

    /// <summary>Evaluates the estimate and queues it for publishing (retained).</summary>
    public InventoryEstimate Publish(long nowMs, string instanceId)
    {
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
        _outbound.Enqueue(new OutboundMessage(_stateTopic, StatePayload.Encode(estimate, instanceId), Retain: true, MqttQualityOfServiceLevel.AtLeastOnce));
        return estimate;
    }

    void ITelemetryReceiver.OnSample(in TelemetrySample sample)
    {
        Monitor.OnSample(sample);
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
        _rejectLog.Warn(ReasonNames.Kebab(rejection.Reason), rejection.SiteId, rejection.SiloId, rejection.SensorId, rejection.Detail);
        _outbound.Enqueue(new OutboundMessage(_deadLetterTopic, DeadLetterCodec.Encode(rejection, _receivedMs), Retain: false, MqttQualityOfServiceLevel.AtLeastOnce));
        _counters.DeadLetterQueued();
    }
}
