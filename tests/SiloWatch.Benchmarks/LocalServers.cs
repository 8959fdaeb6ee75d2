using System.Net;
using System.Net.Sockets;

namespace SiloWatch.Benchmarks;

/// <summary>What the load drivers need to start a server of their own on loopback.</summary>
internal static class LocalServers
{
    /// <summary>Mosquitto: the binary tests/run.sh exports, else the Debian package's.</summary>
    public static string Mosquitto() =>
        Installed("SILOWATCH_TEST_MOSQUITTO_BIN", ["/usr/sbin/mosquitto", "/usr/bin/mosquitto"], "mosquitto is not installed (apt-get install mosquitto)");

    /// <summary>The server binary named by the environment variable (as tests/run.sh exports it), else the first of <paramref name="paths"/> found.</summary>
    public static string Installed(string variable, string[] paths, string missing) =>
        Environment.GetEnvironmentVariable(variable) is { Length: > 0 } env
            ? env
            : paths.FirstOrDefault(File.Exists) ?? throw new InvalidOperationException(missing);

    /// <summary>A loopback port free at the moment of asking.</summary>
    public static int FreeLoopbackPort()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        return ((IPEndPoint)listener.LocalEndpoint).Port;
    }
}
