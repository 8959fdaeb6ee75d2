namespace SiloWatch.Service.Hosting;

/// <summary>
/// Where the broker is: the configured one, or the embedded broker once it has started (its port
/// is known only then). The MQTT client and the demo simulator wait for it.
/// </summary>
public sealed class BrokerEndpoint
{
    private readonly TaskCompletionSource<(string Host, int Port)> _ready = new(TaskCreationOptions.RunContinuationsAsynchronously);

    public bool Embedded { get; private set; }

    public void Set(string host, int port, bool embedded)
    {
        Embedded = embedded;
        _ready.TrySetResult((host, port));
    }

    public Task<(string Host, int Port)> WhenReadyAsync(CancellationToken ct) => _ready.Task.WaitAsync(ct);

    public (string Host, int Port)? Current => _ready.Task.IsCompletedSuccessfully ? _ready.Task.Result : null;
}
