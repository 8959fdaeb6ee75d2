using System.Globalization;
using System.Security.Cryptography;
using System.Text;

namespace SiloWatch.Service.StatusPage;

/// <summary>
/// Password hashes of the status page's users: PBKDF2 with HMAC-SHA-256, a random 16-byte salt and
/// 600 000 iterations, stored as "pbkdf2-sha256$iterations$salt$hash" (base64).
/// </summary>
public static class OperatorPasswords
{
    public const string Scheme = "pbkdf2-sha256";
    public const int DefaultIterations = 600_000;
    private const int SaltBytes = 16;
    private const int HashBytes = 32;

    /// <summary>A new hash of <paramref name="password"/> to put in configuration.</summary>
    public static string Hash(string password, int iterations = DefaultIterations)
    {
        ArgumentException.ThrowIfNullOrEmpty(password);
        var salt = RandomNumberGenerator.GetBytes(SaltBytes);
        var hash = Rfc2898DeriveBytes.Pbkdf2(Encoding.UTF8.GetBytes(password), salt, iterations, HashAlgorithmName.SHA256, HashBytes);
        return string.Create(CultureInfo.InvariantCulture, $"{Scheme}${iterations}${Convert.ToBase64String(salt)}${Convert.ToBase64String(hash)}");
    }

    /// <summary>True when <paramref name="password"/> matches <paramref name="stored"/> (fixed-time comparison); false for a malformed hash.</summary>
    public static bool Verify(string password, string stored)
    {
        if (string.IsNullOrEmpty(password) || !TryParse(stored, out var iterations, out var salt, out var expected))
        {
            return false;
        }

        var actual = Rfc2898DeriveBytes.Pbkdf2(Encoding.UTF8.GetBytes(password), salt, iterations, HashAlgorithmName.SHA256, expected.Length);
        return CryptographicOperations.FixedTimeEquals(actual, expected);
    }

    /// <summary>True when the text has the form of a hash (used to refuse a password written in clear).</summary>
    public static bool IsWellFormed(string stored) => TryParse(stored, out _, out _, out _);

    /// <summary>Lower-case hex SHA-256 of an API token, as <see cref="OperatorToken.TokenSha256"/> stores it.</summary>
    public static string TokenHash(string token) => Convert.ToHexStringLower(SHA256.HashData(Encoding.UTF8.GetBytes(token)));

    private static bool TryParse(string stored, out int iterations, out byte[] salt, out byte[] hash)
    {
        iterations = 0;
        salt = [];
        hash = [];
        var parts = (stored ?? "").Split('$');
        if (parts.Length != 4 || parts[0] != Scheme || !int.TryParse(parts[1], NumberStyles.None, CultureInfo.InvariantCulture, out iterations) || iterations < 10_000)
        {
            return false;
        }

        try
        {
            salt = Convert.FromBase64String(parts[2]);
            hash = Convert.FromBase64String(parts[3]);
        }
        catch (FormatException)
        {
            return false;
        }

        return salt.Length >= 8 && hash.Length >= 16;
    }
}
