using System.Text;
using MQTTnet.Protocol;
using SiloWatch.Service.Ingest;

namespace SiloWatch.Integration.Tests;

/// <summary>The workers' outbound queue: a waiting state is replaced by the newer one of its silo, everything else kept in order.</summary>
public sealed class OutboundQueueTests
{
    private static OutboundMessage Message(string topic, string payload) =>
        new(topic, Encoding.UTF8.GetBytes(payload), Retain: true, MqttQualityOfServiceLevel.AtLeastOnce);

    private static List<(string Topic, string Payload)> Drain(OutboundQueue queue)
    {
        var taken = new List<(string, string)>();
        while (queue.TryRead(out var m))
        {
            taken.Add((m.Topic, Encoding.UTF8.GetString(m.Payload)));
        }

        return taken;
    }

    [Fact]
    public void AWaitingStateIsReplacedInItsPlaceByTheNewerOneOfTheSameSilo()
    {
        var queue = new OutboundQueue(new IngestCounters());
        queue.EnqueueLatest(Message("state/S1", "s1-a"));
        queue.Enqueue(Message("alarms/S1", "alarm-1"));
        queue.EnqueueLatest(Message("state/S2", "s2-a"));
        queue.EnqueueLatest(Message("state/S1", "s1-b"));
        queue.Enqueue(Message("alarms/S1", "alarm-2"));

        Assert.Equal([("state/S1", "s1-b"), ("alarms/S1", "alarm-1"), ("state/S2", "s2-a"), ("alarms/S1", "alarm-2")], Drain(queue));
        Assert.Equal(1, queue.Replaced);
    }

    [Fact]
    public void AStateTakenByThePublisherIsNotReplacedAndTheNextOneIsQueuedAgain()
    {
        var queue = new OutboundQueue(new IngestCounters());
        queue.EnqueueLatest(Message("state/S1", "s1-a"));
        Assert.True(queue.TryRead(out var first));
        queue.EnqueueLatest(Message("state/S1", "s1-b"));
        queue.EnqueueLatest(Message("state/S1", "s1-c"));

        Assert.Equal("s1-a", Encoding.UTF8.GetString(first.Payload));
        Assert.Equal([("state/S1", "s1-c")], Drain(queue));
    }

    [Fact]
    public void AStateDroppedFromAFullQueueIsNotUpdatedInPlaceButQueuedAgain()
    {
        var counters = new IngestCounters();
        var queue = new OutboundQueue(counters, capacity: 2);
        queue.EnqueueLatest(Message("state/S1", "s1-a"));
        queue.Enqueue(Message("alarms/S1", "alarm-1"));
        queue.Enqueue(Message("alarms/S1", "alarm-2")); // full: drops the oldest, the state
        queue.EnqueueLatest(Message("state/S1", "s1-b"));

        Assert.Equal([("alarms/S1", "alarm-2"), ("state/S1", "s1-b")], Drain(queue));
        Assert.Equal(2, counters.Snapshot().OutboundDropped);
    }
}
