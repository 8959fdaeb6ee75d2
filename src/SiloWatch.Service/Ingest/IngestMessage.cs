using System.Buffers;

namespace SiloWatch.Service.Ingest;

/// <summary>
/// One telemetry message on its way to its silo's worker; the payload is rented and returned after
/// processing. <paramref name="Ticket"/> is its acknowledgement, given once a checkpoint covers it.
/// </summary>
public readonly record struct IngestMessage(SiloPipeline Pipeline, byte[] Buffer, int Length, long ReceivedMs, AckTicket? Ticket)
{
    public static IngestMessage Copy(SiloPipeline pipeline, in ReadOnlySequence<byte> payload, long receivedMs, AckTicket? ticket)
    {
        var length = checked((int)payload.Length);
        var buffer = ArrayPool<byte>.Shared.Rent(Math.Max(length, 1));
        payload.CopyTo(buffer);
        return new IngestMessage(pipeline, buffer, length, receivedMs, ticket);
    }

    public void Release() => ArrayPool<byte>.Shared.Return(Buffer);
}
