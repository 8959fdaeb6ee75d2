using SiloWatch.Messaging;

namespace SiloWatch.Service.Ingest;

/// <summary>Counters of everything that came in, was kept, refused or lost. Thread-safe; read by the health endpoint.</summary>
public sealed class IngestCounters
{
    private static readonly RejectReason[] Reasons = Enum.GetValues<RejectReason>();
    private readonly long[] _rejected = new long[Reasons.Max(r => (int)r) + 1];
    private long _messages;
    private long _samples;
    private long _queueFullWaits;
    private long _queueDropped;
    private long _missingMessages;
    private long _duplicates;
    private long _lateFills;
    private long _publisherResets;
    private long _deadLettersQueued;
    private long _outboundDropped;
    private long _published;

    public long Messages => Interlocked.Read(ref _messages);

    public long Samples => Interlocked.Read(ref _samples);

    public long QueueFullWaits => Interlocked.Read(ref _queueFullWaits);

    public long QueueDropped => Interlocked.Read(ref _queueDropped);

    public long MissingMessages => Interlocked.Read(ref _missingMessages);

    public long Duplicates => Interlocked.Read(ref _duplicates);

    public long DeadLettersQueued => Interlocked.Read(ref _deadLettersQueued);

    public long OutboundDropped => Interlocked.Read(ref _outboundDropped);

    public long Published => Interlocked.Read(ref _published);

    public long Rejected(RejectReason reason) => Interlocked.Read(ref _rejected[(int)reason]);

    public long RejectedTotal => _rejected.Sum(x => Interlocked.Read(ref x));

    public void MessageReceived() => Interlocked.Increment(ref _messages);

    public void SamplesAccepted(int count) => Interlocked.Add(ref _samples, count);

    public void QueueFullWaited() => Interlocked.Increment(ref _queueFullWaits);

    public void QueueDroppedOne() => Interlocked.Increment(ref _queueDropped);

    public void Reject(RejectReason reason) => Interlocked.Increment(ref _rejected[(int)reason]);

    public void DeadLetterQueued() => Interlocked.Increment(ref _deadLettersQueued);

    public void OutboundDroppedOne() => Interlocked.Increment(ref _outboundDropped);

    public void PublishedOne() => Interlocked.Increment(ref _published);

    public void Sequence(in DecodeOutcome outcome)
    {
        switch (outcome.Sequence)
        {
            case SequenceStatus.Gap:
                Interlocked.Add(ref _missingMessages, outcome.MissingMessages);
                break;
            case SequenceStatus.Duplicate:
                Interlocked.Increment(ref _duplicates);
                break;
            case SequenceStatus.LateFill:
                Interlocked.Increment(ref _lateFills);
                Interlocked.Decrement(ref _missingMessages);
                break;
            case SequenceStatus.Reset:
                Interlocked.Increment(ref _publisherResets);
                break;
            default:
                break;
        }
    }

    /// <summary>A plain snapshot for the health endpoint and the log.</summary>
    public IngestCountersSnapshot Snapshot() => new(
        Messages,
        Samples,
        RejectedTotal,
        Reasons.Where(r => Rejected(r) > 0).ToDictionary(r => DeadLetterCodec.ReasonName(r), Rejected),
        QueueFullWaits,
        QueueDropped,
        MissingMessages,
        Duplicates,
        Interlocked.Read(ref _lateFills),
        Interlocked.Read(ref _publisherResets),
        DeadLettersQueued,
        Published,
        OutboundDropped);
}

public sealed record IngestCountersSnapshot(
    long Messages,
    long Samples,
    long Rejected,
    IReadOnlyDictionary<string, long> RejectedByReason,
    long QueueFullWaits,
    long QueueDropped,
    long MissingMessages,
    long DuplicateMessages,
    long LateFilledMessages,
    long PublisherResets,
    long DeadLetters,
    long Published,
    long OutboundDropped);

