using System.Threading.Channels;
using MQTTnet;

namespace SiloWatch.Service.Ingest;

/// <summary>One received MQTT message waiting for its acknowledgement.</summary>
public sealed class AckTicket
{
    internal AckTicket(MqttApplicationMessageReceivedEventArgs? message, long connection)
    {
        Message = message;
        Connection = connection;
    }

    internal MqttApplicationMessageReceivedEventArgs? Message { get; }

    /// <summary>The connection the message came on; an acknowledgement on a later one would be wrong.</summary>
    internal long Connection { get; }

    /// <summary>0 waiting, 1 acknowledge, 2 leave unacknowledged (the broker redelivers it to the session).</summary>
    internal volatile int Outcome;
}

/// <summary>
/// Acknowledges received messages in the order they arrived, once each is done with (MQTT 5
/// §4.6: PUBACKs go out in the order the PUBLISH packets came [M]). A telemetry message is done
/// when its samples are processed and its silo's checkpoint (store flushed, snapshot saved) covers
/// it; until then the broker holds it for the persistent session, so a kill loses nothing.
/// Messages of an earlier connection are never acknowledged on a later one (their packet
/// identifiers may be reused): the broker sends them again and the sequence check recognises those
/// that were processed. One pump task sends the acknowledgements, so neither MQTTnet's receive loop
/// nor a worker waits for the socket.
/// </summary>
public sealed class AckWindow : IAsyncDisposable
{
    private readonly Lock _lock = new();
    private readonly Queue<AckTicket> _order = new();
    private readonly Channel<bool> _wake = Channel.CreateBounded<bool>(new BoundedChannelOptions(1) { FullMode = BoundedChannelFullMode.DropWrite, SingleReader = true });
    private readonly CancellationTokenSource _stop = new();
    private Func<long> _connection = static () => 0;
    private Task _pump = Task.CompletedTask;
    private long _acknowledged;
    private long _left;
    private int _disposed;

    /// <summary>Messages received and not yet acknowledged or given up.</summary>
    public int Pending
    {
        get
        {
            lock (_lock)
            {
                return _order.Count;
            }
        }
    }

    public long Acknowledged => Interlocked.Read(ref _acknowledged);

    /// <summary>Messages left unacknowledged on purpose (stopping, or their connection is gone): the broker redelivers them.</summary>
    public long LeftForRedelivery => Interlocked.Read(ref _left);

    /// <summary>Starts the pump; <paramref name="connection"/> tells the number of the current connection.</summary>
    public void Start(Func<long> connection)
    {
        _connection = connection ?? throw new ArgumentNullException(nameof(connection));
        _pump = Task.Run(PumpAsync, CancellationToken.None);
    }

    /// <summary>Takes the acknowledgement of <paramref name="message"/> over from MQTTnet (called in the receive callback, in arrival order).</summary>
    public AckTicket Register(MqttApplicationMessageReceivedEventArgs message)
    {
        ArgumentNullException.ThrowIfNull(message);
        message.AutoAcknowledge = false;
        var ticket = new AckTicket(message, _connection());
        lock (_lock)
        {
            _order.Enqueue(ticket);
        }

        return ticket;
    }

    /// <summary>The message is done with: acknowledge it once every earlier one is.</summary>
    public void Complete(AckTicket ticket)
    {
        ArgumentNullException.ThrowIfNull(ticket);
        ticket.Outcome = 1;
        _wake.Writer.TryWrite(true);
    }

    public void Complete(List<AckTicket> tickets)
    {
        ArgumentNullException.ThrowIfNull(tickets);
        foreach (var ticket in tickets)
        {
            ticket.Outcome = 1;
        }

        _wake.Writer.TryWrite(true);
    }

    /// <summary>The message was not taken (stopping): leave it to the broker, which sends it again to the session.</summary>
    public void Abandon(AckTicket ticket)
    {
        ArgumentNullException.ThrowIfNull(ticket);
        ticket.Outcome = 2;
        _wake.Writer.TryWrite(true);
    }

    /// <summary>Completes when every ticket completed so far has been acknowledged or given up (bounded by <paramref name="ct"/>).</summary>
    public async Task DrainAsync(CancellationToken ct)
    {
        while (true)
        {
            lock (_lock)
            {
                if (_order.Count == 0 || _order.Peek().Outcome == 0 && _order.Peek().Connection == _connection())
                {
                    return;
                }
            }

            _wake.Writer.TryWrite(true);
            await Task.Delay(5, ct).ConfigureAwait(false);
        }
    }

    public async ValueTask DisposeAsync()
    {
        if (Interlocked.Exchange(ref _disposed, 1) != 0)
        {
            return;
        }

        await _stop.CancelAsync().ConfigureAwait(false);
        _wake.Writer.TryComplete();
        await _pump.ConfigureAwait(false);
        _stop.Dispose();
    }

    private async Task PumpAsync()
    {
        var ct = _stop.Token;
        try
        {
            while (await _wake.Reader.WaitToReadAsync(ct).ConfigureAwait(false))
            {
                _wake.Reader.TryRead(out _);
                while (TryTakeHead(out var ticket))
                {
                    if (ticket.Outcome != 1 || ticket.Connection != _connection() || ticket.Message is null)
                    {
                        Interlocked.Increment(ref _left);
                        continue;
                    }

                    try
                    {
                        await ticket.Message.AcknowledgeAsync(ct).ConfigureAwait(false);
                        Interlocked.Increment(ref _acknowledged);
                    }
                    catch (Exception ex) when (ex is not OperationCanceledException || !ct.IsCancellationRequested)
                    {
                        // The connection went away: the broker redelivers the message to the session.
                        Interlocked.Increment(ref _left);
                    }
                }
            }
        }
        catch (OperationCanceledException) when (ct.IsCancellationRequested)
        {
            // disposed
        }
    }

    /// <summary>The oldest ticket when it is decided, or when its connection is gone (it can never be acknowledged).</summary>
    private bool TryTakeHead(out AckTicket ticket)
    {
        lock (_lock)
        {
            if (_order.TryPeek(out ticket!) && (ticket.Outcome != 0 || ticket.Connection != _connection()))
            {
                _order.Dequeue();
                return true;
            }

            return false;
        }
    }
}
