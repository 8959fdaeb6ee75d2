using System.Net;
using System.Net.Sockets;
using Microsoft.Extensions.Logging;
using MQTTnet.Server;

namespace SiloWatch.Messaging;

/// <summary>
/// An in-process MQTT broker (MQTTnet.Server) on 127.0.0.1 only, for the one-command demo and
/// for tests. Persistent sessions are kept in memory (lost when the broker stops); retained
/// messages too. Everything the broker logs goes to the given logger (errors as errors).
/// </summary>
public sealed partial class EmbeddedBroker : IAsyncDisposable
{
    private readonly MqttServer _server;
    private readonly ILogger _logger;
    private int _stopped;

    private EmbeddedBroker(MqttServer server, int port, ILogger logger)
    {
        _server = server;
        Port = port;
        _logger = logger;
    }

    /// <summary>The loopback port the broker listens on.</summary>
    public int Port { get; }

    /// <summary>The underlying server (for tests: sessions, retained messages, disconnecting clients).</summary>
    public MqttServer Server => _server;

    /// <summary>Starts a broker on 127.0.0.1:<paramref name="port"/> (0 = a free port), anonymous logins accepted.</summary>
    public static Task<EmbeddedBroker> StartAsync(int port, ILogger logger, CancellationToken ct) =>
        StartAsync(port, logger, validateConnection: null, ct);

    /// <summary>
    /// Starts a broker whose logins are checked by <paramref name="validateConnection"/> (set
    /// <see cref="ValidatingConnectionEventArgs.ReasonCode"/> to refuse one); null accepts every login.
    /// </summary>
    public static async Task<EmbeddedBroker> StartAsync(int port, ILogger logger,
        Func<ValidatingConnectionEventArgs, Task>? validateConnection, CancellationToken ct)
    {
        ArgumentNullException.ThrowIfNull(logger);
        ArgumentOutOfRangeException.ThrowIfNegative(port);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(port, 65535);
        ct.ThrowIfCancellationRequested();

        // MQTTnet does not report the port it bound, so a free one is picked here. Another process
        // could take it in between; the bind then fails loudly, it never talks to a stranger.
        var chosen = port == 0 ? FreeLoopbackPort() : port;
        var options = new MqttServerOptionsBuilder()
            .WithDefaultEndpoint()
            .WithDefaultEndpointBoundIPAddress(IPAddress.Loopback)
            .WithDefaultEndpointBoundIPV6Address(IPAddress.None)
            .WithDefaultEndpointPort(chosen)
            .WithDefaultEndpointReuseAddress()
            .WithPersistentSessions(true)
            .WithMaxPendingMessagesPerClient(100_000)
            .Build();
        var server = new MqttServerFactory().CreateMqttServer(options, new MqttNetLoggerAdapter(logger, "broker"));
        if (validateConnection is not null)
        {
            server.ValidatingConnectionAsync += validateConnection;
        }

        var broker = new EmbeddedBroker(server, chosen, logger);
        server.ClientConnectedAsync += broker.OnClientConnected;
        server.ClientDisconnectedAsync += broker.OnClientDisconnected;
        try
        {
            await server.StartAsync().ConfigureAwait(false);
        }
        catch
        {
            server.Dispose();
            throw;
        }

        LogStarted(logger, chosen);
        return broker;
    }

    /// <summary>Stops the broker: clients are disconnected, sessions and retained messages are dropped.</summary>
    public async Task StopAsync()
    {
        if (Interlocked.Exchange(ref _stopped, 1) != 0)
        {
            return;
        }

        try
        {
            await _server.StopAsync(new MqttServerStopOptions()).ConfigureAwait(false);
        }
        finally
        {
            _server.Dispose();
            LogStopped(_logger, Port);
        }
    }

    public async ValueTask DisposeAsync() => await StopAsync().ConfigureAwait(false);

    private Task OnClientConnected(ClientConnectedEventArgs e)
    {
        LogClientConnected(_logger, e.ClientId, e.RemoteEndPoint?.ToString() ?? "?");
        return Task.CompletedTask;
    }

    private Task OnClientDisconnected(ClientDisconnectedEventArgs e)
    {
        LogClientDisconnected(_logger, e.ClientId, e.DisconnectType);
        return Task.CompletedTask;
    }

    private static int FreeLoopbackPort()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        var port = ((IPEndPoint)listener.LocalEndpoint).Port;
        listener.Stop();
        return port;
    }

    [LoggerMessage(Level = LogLevel.Information, Message = "Embedded MQTT broker listening on 127.0.0.1:{Port}")]
    private static partial void LogStarted(ILogger logger, int port);

    [LoggerMessage(Level = LogLevel.Information, Message = "Embedded MQTT broker on port {Port} stopped")]
    private static partial void LogStopped(ILogger logger, int port);

    [LoggerMessage(Level = LogLevel.Debug, Message = "Embedded broker: client {ClientId} connected from {Endpoint}")]
    private static partial void LogClientConnected(ILogger logger, string clientId, string endpoint);

    [LoggerMessage(Level = LogLevel.Debug, Message = "Embedded broker: client {ClientId} disconnected ({DisconnectType})")]
    private static partial void LogClientDisconnected(ILogger logger, string clientId, MqttClientDisconnectType disconnectType);
}
