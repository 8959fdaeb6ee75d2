using System.Diagnostics;
using System.Net;
using System.Net.Sockets;

namespace SiloWatch.Integration.Tests.Support;

/// <summary>
/// A real Mosquitto broker of the test's own on a free loopback port, with persistence in a temp
/// folder, so that a test can stop and start it. tests/run.sh installs mosquitto; when it is missing
/// and SILOWATCH_REQUIRE_SERVERS=1 the test fails.
/// </summary>
public sealed class MosquittoServer : IAsyncDisposable
{
    private readonly string _folder;
    private readonly string _configPath;
    private Process? _process;

    private MosquittoServer(string binary, int port, Func<string, string>? access)
    {
        Binary = binary;
        Port = port;
        _folder = Directory.CreateTempSubdirectory("silowatch-mosquitto-").FullName;
        // Mosquitto started as root drops to the mosquitto user: its folder must be writable by it.
        if (!OperatingSystem.IsWindows())
        {
            File.SetUnixFileMode(_folder, (UnixFileMode)0x1FF);
        }
        _configPath = Path.Combine(_folder, "mosquitto.conf");
        File.WriteAllText(_configPath, $"""
            listener {port} 127.0.0.1
            {(access is null ? "allow_anonymous true" : "")}
            persistence true
            persistence_location {_folder}/
            autosave_interval 1
            set_tcp_nodelay true
            max_queued_messages 0
            log_dest file {_folder}/mosquitto.log
            log_type error
            log_type warning
            log_type notice
            {access?.Invoke(_folder) ?? ""}

            """);
    }

    public string Binary { get; }

    public int Port { get; }

    public string Log => File.Exists(Path.Combine(_folder, "mosquitto.log")) ? File.ReadAllText(Path.Combine(_folder, "mosquitto.log")) : "";

    /// <summary>
    /// Starts a broker, or returns null when mosquitto is not installed and servers are not required.
    /// <paramref name="access"/> writes files into the broker's folder (given) and returns config lines that
    /// replace "allow_anonymous true" and come last (a later line wins), e.g. a password file and an ACL.
    /// </summary>
    public static async Task<MosquittoServer?> StartOrNullAsync(Func<string, string>? access = null)
    {
        var binary = FindBinary();
        if (binary is null)
        {
            if (Environment.GetEnvironmentVariable("SILOWATCH_REQUIRE_SERVERS") == "1")
            {
                Assert.Fail("mosquitto is required (SILOWATCH_REQUIRE_SERVERS=1) but was not found; tests/run.sh installs it");
            }

            return null;
        }

        var server = new MosquittoServer(binary, FreePort(), access);
        await server.StartAsync();
        return server;
    }

    public async Task StartAsync()
    {
        _process = Process.Start(new ProcessStartInfo(Binary, ["-c", _configPath])
        {
            RedirectStandardOutput = true,
            RedirectStandardError = true,
            UseShellExecute = false,
        })!;
        var deadline = DateTime.UtcNow + TimeSpan.FromSeconds(10);
        while (DateTime.UtcNow < deadline)
        {
            if (_process.HasExited)
            {
                Assert.Fail($"mosquitto exited with {_process.ExitCode}: {await _process.StandardError.ReadToEndAsync()} {Log}");
            }

            try
            {
                using var probe = new TcpClient();
                await probe.ConnectAsync(IPAddress.Loopback, Port);
                return;
            }
            catch (SocketException)
            {
                await Task.Delay(50);
            }
        }

        Assert.Fail("mosquitto did not start listening within 10 s");
    }

    /// <summary>Stops the broker gracefully (SIGTERM), so it writes its persistence file.</summary>
    public async Task StopAsync()
    {
        if (_process is null || _process.HasExited)
        {
            return;
        }

        using (var kill = Process.Start("kill", ["-TERM", _process.Id.ToString(System.Globalization.CultureInfo.InvariantCulture)]))
        {
            await kill!.WaitForExitAsync();
        }

        using var timeout = new CancellationTokenSource(TimeSpan.FromSeconds(10));
        await _process.WaitForExitAsync(timeout.Token);
        _process.Dispose();
        _process = null;
    }

    public async ValueTask DisposeAsync()
    {
        try
        {
            await StopAsync();
        }
        catch (OperationCanceledException)
        {
            _process?.Kill();
        }

        try
        {
            Directory.Delete(_folder, recursive: true);
        }
        catch (IOException)
        {
        }
    }

    public static int FreePort()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        return ((IPEndPoint)listener.LocalEndpoint).Port;
    }

    private static string? FindBinary()
    {
        var fromEnv = Environment.GetEnvironmentVariable("SILOWATCH_TEST_MOSQUITTO_BIN");
        if (!string.IsNullOrEmpty(fromEnv) && File.Exists(fromEnv))
        {
            return fromEnv;
        }

        foreach (var candidate in new[] { "/usr/sbin/mosquitto", "/usr/bin/mosquitto", "/usr/local/sbin/mosquitto" })
        {
            if (File.Exists(candidate))
            {
                return candidate;
            }
        }

        return null;
    }
}
