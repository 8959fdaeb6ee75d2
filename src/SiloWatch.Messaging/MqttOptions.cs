using System.Globalization;
using Microsoft.Extensions.Options;

namespace SiloWatch.Messaging;

/// <summary>
/// Connection to the MQTT broker, bound from the <see cref="SectionName"/> section. The password
/// is never part of this class: it comes from the environment variable
/// <see cref="PasswordEnvironmentVariable"/> or from <see cref="PasswordFile"/>, so that committed
/// configuration never holds it and it can never be logged with the options.
/// </summary>
public sealed class MqttOptions
{
    public const string SectionName = "Mqtt";

    /// <summary>Environment variable holding the broker password; it wins over <see cref="PasswordFile"/>.</summary>
    public const string PasswordEnvironmentVariable = "SILOWATCH_MQTT_PASSWORD";

    /// <summary>Broker host name or address. Default empty: start the embedded broker on 127.0.0.1.</summary>
    public string Host { get; set; } = "";

    /// <summary>Broker port. Default 1883 (8883 is usual with TLS). With an empty <see cref="Host"/>, 0 picks a free port.</summary>
    public int Port { get; set; } = 1883;

    /// <summary>MQTT client id; the persistent session is keyed by it, so keep it stable per instance. Default "silowatch-" + machine name.</summary>
    public string ClientId { get; set; } = DefaultClientId();

    /// <summary>User name for the broker login. Default empty: anonymous.</summary>
    public string Username { get; set; } = "";

    /// <summary>File holding the password (first line). Default empty. Ignored when <see cref="PasswordEnvironmentVariable"/> is set.</summary>
    public string PasswordFile { get; set; } = "";

    /// <summary>Connect over TLS. Default false.</summary>
    public bool UseTls { get; set; }

    /// <summary>PEM file of the CA that signed the broker's certificate. Default empty: the system trust store.</summary>
    public string CaFile { get; set; } = "";

    /// <summary>Client certificate for mutual TLS: a PEM file (with <see cref="ClientKeyFile"/>) or a PKCS#12 file (.pfx/.p12). Default empty.</summary>
    public string ClientCertificateFile { get; set; } = "";

    /// <summary>PEM private key of <see cref="ClientCertificateFile"/>. Default empty: the key is in the certificate file.</summary>
    public string ClientKeyFile { get; set; } = "";

    /// <summary>Accept a broker certificate that does not validate. Default false; for a lab only, never in production.</summary>
    public bool AllowUntrustedCertificates { get; set; }

    /// <summary>MQTT keep-alive; the supervisor also pings at this period. Default 15 s.</summary>
    public TimeSpan KeepAlive { get; set; } = TimeSpan.FromSeconds(15);

    /// <summary>How long the broker keeps the session (subscriptions and queued QoS 1 messages) while this instance is away. Default 1 day.</summary>
    public TimeSpan SessionExpiry { get; set; } = TimeSpan.FromDays(1);

    /// <summary>First delay before reconnecting; doubles per failed attempt up to <see cref="ReconnectDelayMax"/>, with jitter. Default 1 s.</summary>
    public TimeSpan ReconnectDelay { get; set; } = TimeSpan.FromSeconds(1);

    /// <summary>Longest delay between reconnect attempts. Default 30 s.</summary>
    public TimeSpan ReconnectDelayMax { get; set; } = TimeSpan.FromSeconds(30);

    /// <summary>Time allowed for one connect (TCP, TLS and CONNACK) or one request. Default 10 s.</summary>
    public TimeSpan ConnectTimeout { get; set; } = TimeSpan.FromSeconds(10);

    /// <summary>
    /// Will delay: the broker publishes the "offline" will only when the instance stays away this long,
    /// so a quick restart does not flap the status. Default 5 s.
    /// </summary>
    public TimeSpan WillDelay { get; set; } = TimeSpan.FromSeconds(5);

    /// <summary>First level of every topic. Default "silowatch".</summary>
    public string TopicPrefix { get; set; } = "silowatch";

    /// <summary>Largest telemetry payload accepted; larger ones are dead-lettered unread. Default 256 KiB.</summary>
    public int MaxPayloadBytes { get; set; } = 256 * 1024;

    /// <summary>The host to connect to: <see cref="Host"/>, or the loopback address of the embedded broker when empty.</summary>
    public string EffectiveHost => Host.Length == 0 ? "127.0.0.1" : Host;

    /// <summary>
    /// The password: the environment variable when set, else the first line of <see cref="PasswordFile"/>,
    /// else null (no password). Throws <see cref="IOException"/> when the file cannot be read.
    /// </summary>
    public string? ResolvePassword(Func<string, string?>? environment = null)
    {
        environment ??= Environment.GetEnvironmentVariable;
        var fromEnvironment = environment(PasswordEnvironmentVariable);
        if (!string.IsNullOrEmpty(fromEnvironment))
        {
            return fromEnvironment;
        }

        if (PasswordFile.Length == 0)
        {
            return null;
        }

        try
        {
            using var reader = new StreamReader(PasswordFile);
            return reader.ReadLine() ?? "";
        }
        catch (Exception ex) when (ex is UnauthorizedAccessException or FileNotFoundException or DirectoryNotFoundException)
        {
            throw new IOException($"cannot read the MQTT password file {PasswordFile}: {ex.Message}", ex);
        }
    }

    private static string DefaultClientId()
    {
        var machine = Environment.MachineName.ToLowerInvariant();
        return "silowatch-" + (machine.Length == 0 ? "host" : machine);
    }
}

/// <summary>Checks <see cref="MqttOptions"/> at start-up; each failure names the key and the value.</summary>
public sealed class MqttOptionsValidator : IValidateOptions<MqttOptions>
{
    public ValidateOptionsResult Validate(string? name, MqttOptions options)
    {
        ArgumentNullException.ThrowIfNull(options);
        var failures = new List<string>();
        void Fail(string key, object? value, string problem) =>
            failures.Add(string.Create(CultureInfo.InvariantCulture, $"{MqttOptions.SectionName}:{key} = '{value}': {problem}"));

        var minPort = options.Host.Length == 0 ? 0 : 1;
        if (options.Port < minPort || options.Port > 65535)
        {
            Fail(nameof(options.Port), options.Port, $"port must be {minPort}..65535");
        }

        if (options.ClientId.Length is 0 or > 128 || options.ClientId.Any(c => char.IsControl(c) || c is '+' or '#' or '/'))
        {
            Fail(nameof(options.ClientId), options.ClientId, "client id must be 1-128 printable characters without '+', '#' or '/'");
        }

        Positive(nameof(options.KeepAlive), options.KeepAlive, TimeSpan.FromHours(18));
        Positive(nameof(options.SessionExpiry), options.SessionExpiry, TimeSpan.FromSeconds(uint.MaxValue - 1));
        Positive(nameof(options.ReconnectDelay), options.ReconnectDelay, TimeSpan.FromHours(1));
        Positive(nameof(options.ReconnectDelayMax), options.ReconnectDelayMax, TimeSpan.FromHours(1));
        Positive(nameof(options.ConnectTimeout), options.ConnectTimeout, TimeSpan.FromMinutes(10));
        if (options.ReconnectDelayMax < options.ReconnectDelay)
        {
            Fail(nameof(options.ReconnectDelayMax), options.ReconnectDelayMax, "must not be shorter than ReconnectDelay");
        }

        if (options.WillDelay < TimeSpan.Zero || options.WillDelay > options.SessionExpiry)
        {
            Fail(nameof(options.WillDelay), options.WillDelay, "must be between 0 and SessionExpiry");
        }

        if (!TopicScheme.IsValidPrefix(options.TopicPrefix))
        {
            Fail(nameof(options.TopicPrefix), options.TopicPrefix, "prefix must be 1-64 of letters, digits, '-' and '_' (one topic level)");
        }

        if (options.MaxPayloadBytes is < 256 or > 16 * 1024 * 1024)
        {
            Fail(nameof(options.MaxPayloadBytes), options.MaxPayloadBytes, "must be 256 bytes .. 16 MiB");
        }

        foreach (var (key, path) in new[]
                 {
                     (nameof(options.PasswordFile), options.PasswordFile),
                     (nameof(options.CaFile), options.CaFile),
                     (nameof(options.ClientCertificateFile), options.ClientCertificateFile),
                     (nameof(options.ClientKeyFile), options.ClientKeyFile),
                 })
        {
            if (path.Length > 0 && !File.Exists(path))
            {
                Fail(key, path, "file not found");
            }
        }

        if (!options.UseTls && (options.CaFile.Length > 0 || options.ClientCertificateFile.Length > 0))
        {
            Fail(nameof(options.UseTls), options.UseTls, "CaFile or ClientCertificateFile is set but UseTls is false");
        }

        return failures.Count == 0 ? ValidateOptionsResult.Success : ValidateOptionsResult.Fail(failures);

        void Positive(string key, TimeSpan value, TimeSpan max)
        {
            if (value <= TimeSpan.Zero || value > max)
            {
                Fail(key, value, $"must be positive and at most {max}");
            }
        }
    }
}
