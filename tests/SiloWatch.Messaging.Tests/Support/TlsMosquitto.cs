using System.Diagnostics;
using System.Net;
using System.Net.Sockets;
using System.Security.Cryptography;
using System.Security.Cryptography.X509Certificates;

namespace SiloWatch.Messaging.Tests.Support;

/// <summary>
/// A Mosquitto with a TLS listener on a free loopback port, its CA and server certificate made
/// here for the test (no committed keys). Needs the mosquitto binary: SILOWATCH_TEST_MOSQUITTO_BIN
/// (set by tests/run.sh) or /usr/sbin/mosquitto. <see cref="Available"/> is false without it.
/// </summary>
public sealed class TlsMosquitto : IAsyncLifetime
{
    private Process? _process;

    public bool Available { get; private set; }

    public string Missing { get; private set; } = "";

    public int Port { get; private set; }

    public string Folder { get; } = Directory.CreateTempSubdirectory("silowatch-tls-").FullName;

    public string CaFile => Path.Combine(Folder, "ca.pem");

    /// <summary>A CA that did not sign the server certificate.</summary>
    public string OtherCaFile => Path.Combine(Folder, "other-ca.pem");

    public string Log => File.Exists(Path.Combine(Folder, "mosquitto.log")) ? File.ReadAllText(Path.Combine(Folder, "mosquitto.log")) : "";

    public async Task InitializeAsync()
    {
        var binary = Environment.GetEnvironmentVariable("SILOWATCH_TEST_MOSQUITTO_BIN") is { Length: > 0 } fromEnv
            ? fromEnv
            : "/usr/sbin/mosquitto";
        if (OperatingSystem.IsWindows() || !File.Exists(binary))
        {
            Missing = $"mosquitto not found ({binary}); set SILOWATCH_TEST_MOSQUITTO_BIN";
            return;
        }

        WriteCertificates();
        Port = FreePort();
        var conf = Path.Combine(Folder, "mosquitto.conf");
        await File.WriteAllTextAsync(conf, $"""
            listener {Port} 127.0.0.1
            allow_anonymous true
            cafile {CaFile}
            certfile {Path.Combine(Folder, "server.pem")}
            keyfile {Path.Combine(Folder, "server.key")}
            log_dest file {Path.Combine(Folder, "mosquitto.log")}
            """);

        // Mosquitto started as root drops to the user "mosquitto": it must be able to read the files.
        File.SetUnixFileMode(Folder, (UnixFileMode)0x1FF);
        foreach (var file in Directory.GetFiles(Folder))
        {
            File.SetUnixFileMode(file, (UnixFileMode)0x1B6);
        }

        _process = Process.Start(new ProcessStartInfo(binary, ["-c", conf]) { RedirectStandardError = true, RedirectStandardOutput = true });
        var deadline = DateTime.UtcNow + TimeSpan.FromSeconds(20);
        while (DateTime.UtcNow < deadline && !_process!.HasExited)
        {
            try
            {
                using var probe = new TcpClient();
                await probe.ConnectAsync(IPAddress.Loopback, Port);
                Available = true;
                return;
            }
            catch (SocketException)
            {
                await Task.Delay(50);
            }
        }

        Missing = "mosquitto did not start: " + Log + (_process!.HasExited ? await _process.StandardError.ReadToEndAsync() : "");
    }

    public async Task DisposeAsync()
    {
        if (_process is { HasExited: false })
        {
            _process.Kill();
            await _process.WaitForExitAsync();
        }

        _process?.Dispose();
        Directory.Delete(Folder, recursive: true);
    }

    private void WriteCertificates()
    {
        var now = DateTimeOffset.UtcNow;
        using var caKey = ECDsa.Create(ECCurve.NamedCurves.nistP256);
        using var ca = SelfSignedCa("CN=SiloWatch test CA (made by the test run)", caKey, now);
        using var otherKey = ECDsa.Create(ECCurve.NamedCurves.nistP256);
        using var other = SelfSignedCa("CN=Some other CA", otherKey, now);

        using var serverKey = ECDsa.Create(ECCurve.NamedCurves.nistP256);
        var request = new CertificateRequest("CN=127.0.0.1", serverKey, HashAlgorithmName.SHA256);
        var names = new SubjectAlternativeNameBuilder();
        names.AddIpAddress(IPAddress.Loopback);
        names.AddDnsName("localhost");
        request.CertificateExtensions.Add(names.Build());
        request.CertificateExtensions.Add(new X509BasicConstraintsExtension(false, false, 0, true));
        request.CertificateExtensions.Add(new X509KeyUsageExtension(X509KeyUsageFlags.DigitalSignature, true));
        request.CertificateExtensions.Add(new X509EnhancedKeyUsageExtension([new Oid("1.3.6.1.5.5.7.3.1")], false)); // serverAuth
        request.CertificateExtensions.Add(X509AuthorityKeyIdentifierExtension.CreateFromCertificate(ca, true, false));
        using var server = request.Create(ca, now.AddHours(-1), now.AddDays(1), RandomNumberGenerator.GetBytes(12));

        File.WriteAllText(CaFile, ca.ExportCertificatePem() + "\n");
        File.WriteAllText(OtherCaFile, other.ExportCertificatePem() + "\n");
        File.WriteAllText(Path.Combine(Folder, "server.pem"), server.ExportCertificatePem() + "\n");
        File.WriteAllText(Path.Combine(Folder, "server.key"), serverKey.ExportPkcs8PrivateKeyPem() + "\n");
    }

    private static X509Certificate2 SelfSignedCa(string subject, ECDsa key, DateTimeOffset now)
    {
        var request = new CertificateRequest(subject, key, HashAlgorithmName.SHA256);
        request.CertificateExtensions.Add(new X509BasicConstraintsExtension(true, false, 0, true));
        request.CertificateExtensions.Add(new X509KeyUsageExtension(X509KeyUsageFlags.KeyCertSign | X509KeyUsageFlags.CrlSign, true));
        request.CertificateExtensions.Add(new X509SubjectKeyIdentifierExtension(request.PublicKey, false));
        return request.CreateSelfSigned(now.AddDays(-1), now.AddDays(2));
    }

    private static int FreePort()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        return ((IPEndPoint)listener.LocalEndpoint).Port;
    }
}
