using System.Security.Cryptography;
using System.Text;

namespace SiloWatch.Integration.Tests.Support;

/// <summary>
/// A real Mosquitto that demands a password and applies an ACL: deploy/mosquitto/silowatch.acl as
/// shipped (copied beside the test binaries), or a variant of it made by the test. The users of that
/// ACL get fresh random passwords for the run; no committed secret.
/// </summary>
public static class AclBroker
{
    public const string ServiceUser = "silowatch";
    public const string GatewayUser = "gw-brackenford";
    public const string OperatorUser = "operator";

    /// <summary>The ACL file as shipped in deploy/.</summary>
    public static string DeployAcl => File.ReadAllText(Path.Combine(AppContext.BaseDirectory, "deploy", "silowatch.acl"));

    /// <summary>Starts the broker with <paramref name="acl"/> (default: the deploy ACL); null when mosquitto is missing and not required.</summary>
    public static async Task<(MosquittoServer Broker, IReadOnlyDictionary<string, string> Passwords)?> StartOrNullAsync(string? acl = null)
    {
        var passwords = new[] { ServiceUser, GatewayUser, OperatorUser }
            .ToDictionary(u => u, _ => Convert.ToHexString(RandomNumberGenerator.GetBytes(12)), StringComparer.Ordinal);
        var broker = await MosquittoServer.StartOrNullAsync(folder =>
        {
            var passwordFile = Path.Combine(folder, "passwd");
            var aclFile = Path.Combine(folder, "silowatch.acl");
            File.WriteAllLines(passwordFile, passwords.Select(p => p.Key + ":" + MosquittoHash(p.Value)));
            File.WriteAllText(aclFile, acl ?? DeployAcl);
            if (!OperatingSystem.IsWindows())
            {
                // Mosquitto started as root drops to the mosquitto user, which must read both files.
                File.SetUnixFileMode(passwordFile, (UnixFileMode)0x1A4);
                File.SetUnixFileMode(aclFile, (UnixFileMode)0x1A4);
            }

            // The queue bound of deploy/mosquitto/silowatch.conf: with max_queued_messages 0 Mosquitto 2.0.11 drops
            // the connection of a client after each publish its ACL denies (measured here), so deploy/ sets a bound.
            return $"allow_anonymous false\npassword_file {passwordFile}\nacl_file {aclFile}\nlog_type debug\nmax_queued_messages 1000000";
        });
        return broker is null ? null : (broker, passwords);
    }

    /// <summary>
    /// A Mosquitto 2 password-file hash: "$7$" iterations "$" salt "$" PBKDF2-HMAC-SHA512 (64 bytes), both
    /// base64; 101 iterations and a 12-byte salt, as mosquitto_passwd 2.0.11 writes them (seen in its output here).
    /// </summary>
    public static string MosquittoHash(string password)
    {
        const int Iterations = 101;
        var salt = RandomNumberGenerator.GetBytes(12);
        var hash = Rfc2898DeriveBytes.Pbkdf2(Encoding.UTF8.GetBytes(password), salt, Iterations, HashAlgorithmName.SHA512, 64);
        return $"$7${Iterations}${Convert.ToBase64String(salt)}${Convert.ToBase64String(hash)}";
    }
}
