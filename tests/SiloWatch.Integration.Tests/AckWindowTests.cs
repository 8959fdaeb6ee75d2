using System.Collections.Concurrent;
using MQTTnet;
using MQTTnet.Packets;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Integration.Tests;

/// <summary>The service's acknowledgements: in arrival order, only once decided, never on a later connection.</summary>
public sealed class AckWindowTests
{
    private readonly ConcurrentQueue<ushort> _sent = new();
    private long _connection = 1;

    private MqttApplicationMessageReceivedEventArgs Received(ushort packetId) =>
        new("it", new MqttApplicationMessageBuilder().WithTopic("t").Build(), new MqttPublishPacket { PacketIdentifier = packetId },
            (e, _) =>
            {
                _sent.Enqueue(e.PacketIdentifier);
                return Task.CompletedTask;
            });

    [Fact]
    public async Task MessagesAreAcknowledgedInArrivalOrderOnceEveryEarlierOneIsDone()
    {
        await using var window = new AckWindow();
        window.Start(() => Interlocked.Read(ref _connection));
        var tickets = Enumerable.Range(1, 4).Select(i => window.Register(Received((ushort)i))).ToList();

        window.Complete(tickets[1]);
        window.Complete(tickets[3]);
        await Task.Delay(100); // give the pump the chance to get it wrong
        Assert.Empty(_sent);

        window.Complete(tickets[0]);
        await Support.TestMqtt.WaitForAsync(() => _sent.Count == 2, "the first two acknowledged");
        Assert.Equal(new ushort[] { 1, 2 }, _sent.ToArray());

        window.Complete(tickets[2]);
        await window.DrainAsync(CancellationToken.None);
        Assert.Equal(new ushort[] { 1, 2, 3, 4 }, _sent.ToArray());
        Assert.Equal(4, window.Acknowledged);
        Assert.Equal(0, window.Pending);
    }

    [Fact]
    public async Task AMessageOfAnEarlierConnectionOrLeftWhileStoppingIsNeverAcknowledged()
    {
        await using var window = new AckWindow();
        window.Start(() => Interlocked.Read(ref _connection));
        var old = window.Register(Received(7));
        Interlocked.Increment(ref _connection); // reconnected: packet id 7 may now name another message
        var abandoned = window.Register(Received(8));
        var current = window.Register(Received(9));

        window.Complete(old);
        window.Abandon(abandoned);
        window.Complete(current);
        await window.DrainAsync(CancellationToken.None);

        Assert.Equal(new ushort[] { 9 }, _sent.ToArray());
        Assert.Equal(2, window.LeftForRedelivery);
        Assert.Equal(3, window.Acknowledged + window.LeftForRedelivery);
    }
}
