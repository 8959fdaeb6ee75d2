using SiloWatch.Messaging;

namespace SiloWatch.Service.Ingest;

/// <summary>
/// The one loop that sends what the workers queued (<see cref="OutboundQueue"/>): it takes up to
/// <see cref="MaxBatch"/> waiting messages at a time and publishes them together, their QoS 1
/// acknowledgements awaited together (one round trip per message would cap it at a few hundred
/// messages per second on a busy machine: measured with the scale-load driver). A message the broker
/// refused (e.g. its ACL) is counted in <see cref="PublishRefusals"/> and dropped; one that did not
/// reach the broker is retried, in order, once connected again.
/// </summary>
public sealed class OutboundPublisher(OutboundQueue outbound, IngestCounters counters, PublishRefusals refusals, TimeProvider time, ILogger logger)
{
    /// <summary>Most messages taken from the queue for one round of publishing.</summary>
    public const int MaxBatch = 256;

    private static readonly TimeSpan RetryDelay = TimeSpan.FromMilliseconds(200);

    /// <summary>Runs until the queue is completed and drained, or <paramref name="ct"/> is cancelled (a hard stop).</summary>
    public async Task RunAsync(SupervisedMqttClient client, CancellationToken ct)
    {
        ArgumentNullException.ThrowIfNull(client);
        var batch = new List<OutboundMessage>(MaxBatch);
        var outgoing = new List<MqttOutgoing>(MaxBatch);
        try
        {
            while (true)
            {
                if (batch.Count == 0 && !await outbound.WaitToReadAsync(ct).ConfigureAwait(false))
                {
                    return; // completed and drained
                }

                while (batch.Count < MaxBatch && outbound.TryRead(out var next))
                {
                    batch.Add(next);
                }

                if (!client.IsConnected)
                {
                    await Task.Delay(RetryDelay, time, ct).ConfigureAwait(false);
                    continue;
                }

                outgoing.Clear();
                outgoing.AddRange(batch.Select(m => new MqttOutgoing(m.Topic, m.Payload, m.Retain, m.Qos)));
                MqttPublishException?[] results;
                try
                {
                    results = await client.PublishManyAsync(outgoing, ct).ConfigureAwait(false);
                }
                catch (Exception ex) when (ex is not OperationCanceledException)
                {
                    // Whatever it was, the loop must outlive it: keep the batch and try again.
                    logger.LogWarning(ex, "Publishing {Count} message(s) failed; retrying", batch.Count);
                    await Task.Delay(RetryDelay, time, ct).ConfigureAwait(false);
                    continue;
                }

                var kept = 0;
                for (var i = 0; i < batch.Count; i++)
                {
                    switch (results[i])
                    {
                        case null:
                            counters.PublishedOne();
                            break;
                        case { RefusedWith: { } reason }:
                            // The broker answered and said no (e.g. its ACL): the same message gets the same answer.
                            refusals.Record(batch[i].Topic, reason);
                            break;
                        case var failed:
                            logger.LogDebug(failed, "Publish to {Topic} failed; retrying", batch[i].Topic);
                            batch[kept++] = batch[i];
                            break;
                    }
                }

                batch.RemoveRange(kept, batch.Count - kept);
                if (kept > 0)
                {
                    await Task.Delay(RetryDelay, time, ct).ConfigureAwait(false);
                }
            }
        }
        catch (OperationCanceledException) when (ct.IsCancellationRequested)
        {
            // hard stop
        }
    }
}
