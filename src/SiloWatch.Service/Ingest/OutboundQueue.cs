using System.Threading.Channels;
using MQTTnet.Protocol;

namespace SiloWatch.Service.Ingest;

/// <summary>One message to publish: state, alarms, events or dead letters.</summary>
public sealed record OutboundMessage(string Topic, byte[] Payload, bool Retain, MqttQualityOfServiceLevel Qos);

/// <summary>
/// Everything the workers publish goes through this bounded queue, so a worker never waits on the
/// network. When full the oldest message is dropped and counted: retained states are re-published
/// each interval, so the newest matters most.
/// </summary>
public sealed class OutboundQueue
{
    private readonly Channel<OutboundMessage> _channel;

    public OutboundQueue(IngestCounters counters, int capacity = 8192)
    {
        _channel = Channel.CreateBounded<OutboundMessage>(
            new BoundedChannelOptions(capacity) { FullMode = BoundedChannelFullMode.DropOldest, SingleReader = true },
            _ => counters.OutboundDroppedOne());
    }

    public ChannelReader<OutboundMessage> Reader => _channel.Reader;

    public int Count => _channel.Reader.Count;

    public void Enqueue(OutboundMessage message) => _channel.Writer.TryWrite(message);

    public void Complete() => _channel.Writer.TryComplete();
}
