using SiloWatch.Plant;

namespace SiloWatch.Messaging;

/// <summary>Where the decoder delivers what it read: called synchronously from <see cref="TelemetryDecoder.Decode"/>.</summary>
public interface ITelemetryReceiver
{
    /// <summary>One accepted sample; the reference is only valid during the call.</summary>
    void OnSample(in TelemetrySample sample);

    /// <summary>One rejected sample, or a whole rejected message.</summary>
    void OnRejected(TelemetryRejection rejection);
}

/// <summary>Why telemetry was rejected. Dead letters carry it in kebab-case (see <see cref="DeadLetterCodec"/>).</summary>
public enum RejectReason
{
    /// <summary>Payload larger than the configured maximum; not read at all.</summary>
    PayloadTooLarge,

    /// <summary>Not well-formed JSON (or not UTF-8): the whole message.</summary>
    MalformedJson,

    /// <summary>Well-formed JSON of the wrong shape: root not an object, "samples" not an array, a sample not an object, bad "pub" or "seq".</summary>
    InvalidStructure,

    /// <summary>JSON nested deeper than the configured maximum: the whole message.</summary>
    TooDeep,

    /// <summary>More samples in one message than the configured maximum: the whole message.</summary>
    TooManySamples,

    /// <summary>A required field (sensor, value, unit, ts) is missing.</summary>
    MissingField,

    /// <summary>The topic names a silo this instance does not know (raised by the router, not the decoder).</summary>
    UnknownSilo,

    /// <summary>The sensor id is not defined for this silo.</summary>
    UnknownSensor,

    /// <summary>The unit differs from the sensor's declared unit.</summary>
    WrongUnit,

    /// <summary>The value is not a JSON number.</summary>
    InvalidValue,

    /// <summary>The value is NaN or infinite (a "NaN" string, or a number such as 1e400 that overflows).</summary>
    NotFinite,

    /// <summary>The value is outside the sensor's RangeMin..RangeMax.</summary>
    OutOfRange,

    /// <summary>The timestamp is neither an ISO-8601 string with a UTC offset nor epoch milliseconds.</summary>
    InvalidTimestamp,

    /// <summary>The timestamp is further in the future than MaxFutureSkew.</summary>
    TimestampInFuture,

    /// <summary>The timestamp is older than MaxLateness.</summary>
    TimestampTooOld,

    /// <summary>Same publisher and sequence number already seen: the whole message, once.</summary>
    DuplicateMessage,

    /// <summary>The decoder hit an unexpected fault on this message (a bug, reported instead of thrown).</summary>
    DecoderFault,
}

/// <summary>
/// One rejection, with everything needed for the dead-letter topic and the log:
/// <paramref name="Fragment"/> is the offending JSON (the sample object, or the start of the
/// message), truncated to <see cref="TelemetryRejection.MaxFragmentBytes"/> bytes.
/// </summary>
public sealed record TelemetryRejection(
    RejectReason Reason,
    string Detail,
    string SiteId,
    string SiloId,
    string? SensorId,
    string? Publisher,
    long? Sequence,
    string Fragment)
{
    /// <summary>Longest fragment kept, in UTF-8 bytes.</summary>
    public const int MaxFragmentBytes = 256;
}

/// <summary>Limits of the telemetry decoder.</summary>
public sealed class TelemetryDecoderOptions
{
    /// <summary>Largest timestamp lead over the receiver's clock. Default 30 s.</summary>
    public TimeSpan MaxFutureSkew { get; set; } = TimeSpan.FromSeconds(30);

    /// <summary>Oldest sample accepted, relative to the receiver's clock. Default 1 h; zero = unlimited (for replays).</summary>
    public TimeSpan MaxLateness { get; set; } = TimeSpan.FromHours(1);

    /// <summary>Most samples in one message; a larger batch is rejected whole. Default 1000.</summary>
    public int MaxSamplesPerMessage { get; set; } = 1000;

    /// <summary>Deepest JSON nesting accepted (the root object is 1). Default 8, at least 3.</summary>
    public int MaxDepth { get; set; } = 8;

    /// <summary>Largest payload read. Default 256 KiB (as <see cref="MqttOptions.MaxPayloadBytes"/>).</summary>
    public int MaxPayloadBytes { get; set; } = 256 * 1024;

    /// <summary>Most publishers tracked per silo for sequence checks; the least recently seen is forgotten. Default 64.</summary>
    public int MaxPublishersPerSilo { get; set; } = 64;

    /// <summary>Throws <see cref="ArgumentOutOfRangeException"/> naming the first bad limit.</summary>
    public void Validate()
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(MaxFutureSkew, TimeSpan.Zero, nameof(MaxFutureSkew));
        ArgumentOutOfRangeException.ThrowIfLessThan(MaxLateness, TimeSpan.Zero, nameof(MaxLateness));
        ArgumentOutOfRangeException.ThrowIfLessThan(MaxSamplesPerMessage, 1, nameof(MaxSamplesPerMessage));
        ArgumentOutOfRangeException.ThrowIfGreaterThan(MaxSamplesPerMessage, 100_000, nameof(MaxSamplesPerMessage));
        ArgumentOutOfRangeException.ThrowIfLessThan(MaxDepth, 3, nameof(MaxDepth));
        ArgumentOutOfRangeException.ThrowIfGreaterThan(MaxDepth, 64, nameof(MaxDepth));
        ArgumentOutOfRangeException.ThrowIfLessThan(MaxPayloadBytes, 64, nameof(MaxPayloadBytes));
        ArgumentOutOfRangeException.ThrowIfLessThan(MaxPublishersPerSilo, 1, nameof(MaxPublishersPerSilo));
    }
}

/// <summary>
/// What one message gave: samples delivered, rejections delivered (a whole-message rejection
/// counts once), the sequence verdict and, for a <see cref="SequenceStatus.Gap"/>, how many
/// messages are missing before this one.
/// </summary>
public readonly record struct DecodeOutcome(int Accepted, int Rejected, SequenceStatus Sequence, long MissingMessages);

/// <summary>
/// Where one publisher's sequence stands on one silo: the highest seq seen and a bitmap of the 64
/// seqs at and below it (bit i = Highest - i seen). Saved with the silo's checkpoint so that a
/// redelivery after a restart is recognised as a duplicate.
/// </summary>
public sealed record PublisherPosition(string Publisher, long Highest, ulong Seen);

/// <summary>Verdict on a message's (pub, seq) against what was seen from that publisher on this silo.</summary>
public enum SequenceStatus
{
    /// <summary>First message seen from this publisher (since start or since it was forgotten).</summary>
    First,

    /// <summary>Exactly one more than the last.</summary>
    InOrder,

    /// <summary>Ahead of the last by more than one: <see cref="DecodeOutcome.MissingMessages"/> were lost (so far).</summary>
    Gap,

    /// <summary>Already seen: the message was rejected whole.</summary>
    Duplicate,

    /// <summary>A message counted missing by an earlier gap arrived late; accepted (one fewer missing).</summary>
    LateFill,

    /// <summary>Far below the last (beyond the 64-message window) or 0: the publisher restarted; tracking starts over.</summary>
    Reset,

    /// <summary>No "seq" in the message (or rejected before it was read): no loss or duplicate detection.</summary>
    Absent,
}
