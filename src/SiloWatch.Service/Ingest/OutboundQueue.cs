using System.Collections.Concurrent;
using System.Threading.Channels;
using MQTTnet.Protocol;

namespace SiloWatch.Service.Ingest;

/// <summary>One message to publish: state, alarms, events or dead letters.</summary>
public sealed record OutboundMessage(string Topic, byte[] Payload, bool Retain, MqttQualityOfServiceLevel Qos);

/// <summary>
/// Everything the workers publish goes through this bounded queue, so a worker never waits on the
/// network. When full the oldest message is dropped and counted: retained states are re-published
/// each interval, so the newest matters most. For the same reason a state queued with
/// <see cref="EnqueueLatest"/> and not yet taken by the publisher is replaced by the silo's newer
/// one in its place: when states are evaluated faster than they can be sent, each silo keeps at
/// most one waiting, the newest.
/// </summary>
public sealed class OutboundQueue
{
    private readonly Channel<Slot> _channel;
    private readonly ConcurrentDictionary<string, Slot> _latest = new(StringComparer.Ordinal);
    private long _replaced;

    public OutboundQueue(IngestCounters counters, int capacity = 8192)
    {
        _channel = Channel.CreateBounded<Slot>(
            new BoundedChannelOptions(capacity) { FullMode = BoundedChannelFullMode.DropOldest, SingleReader = true },
            slot =>
            {
                Take(slot);
                counters.OutboundDroppedOne();
            });
    }

    public int Count => _channel.Reader.Count;

    /// <summary>States replaced by a newer one of the same topic before they were sent.</summary>
    public long Replaced => Interlocked.Read(ref _replaced);

    public void Enqueue(OutboundMessage message) => _channel.Writer.TryWrite(new Slot(message, keyed: false));

    /// <summary>Queues <paramref name="message"/>, or puts it in the place of the one of the same topic still waiting.</summary>
    public void EnqueueLatest(OutboundMessage message)
    {
        ArgumentNullException.ThrowIfNull(message);
        if (_latest.TryGetValue(message.Topic, out var waiting))
        {
            lock (waiting)
            {
                if (!waiting.Taken)
                {
                    waiting.Message = message;
                    Interlocked.Increment(ref _replaced);
                    return;
                }
            }
        }

        var slot = new Slot(message, keyed: true);
        _latest[message.Topic] = slot;
        _channel.Writer.TryWrite(slot);
    }

    /// <summary>Waits until a message can be read; false once completed and drained.</summary>
    public ValueTask<bool> WaitToReadAsync(CancellationToken ct) => _channel.Reader.WaitToReadAsync(ct);

    /// <summary>Takes the oldest waiting message (the single reader: the publisher).</summary>
    public bool TryRead(out OutboundMessage message)
    {
        if (_channel.Reader.TryRead(out var slot))
        {
            message = Take(slot);
            return true;
        }

        message = null!;
        return false;
    }

    public void Complete() => _channel.Writer.TryComplete();

    private OutboundMessage Take(Slot slot)
    {
        OutboundMessage message;
        lock (slot)
        {
            slot.Taken = true;
            message = slot.Message;
        }

        if (slot.Keyed)
        {
            _latest.TryRemove(new KeyValuePair<string, Slot>(message.Topic, slot));
        }

        return message;
    }

    private sealed class Slot(OutboundMessage message, bool keyed)
    {
        public OutboundMessage Message { get; set; } = message;

        public bool Keyed { get; } = keyed;

        public bool Taken { get; set; }
    }
}
