namespace SiloWatch.Service.StatusPage;

/// <summary>
/// The live status page and its API on the health host (Health:Urls, loopback by default). Section
/// <see cref="SectionName"/>. Reading is open on loopback; acknowledging, shelving and resetting
/// need a configured user (PBKDF2 password hash) or an API token (SHA-256 hash). Secrets are never
/// kept in clear: put hashes in configuration, SILOWATCH_StatusPage__… environment variables or
/// <see cref="UsersFile"/>.
/// </summary>
public sealed class StatusPageOptions
{
    public const string SectionName = "StatusPage";

    /// <summary>Serve the page and its API. Default true.</summary>
    public bool Enabled { get; set; } = true;

    /// <summary>Allow reading from addresses other than loopback (when Health:Urls listens wider). Default false.</summary>
    public bool AllowRemoteRead { get; set; }

    /// <summary>Users who may act on alarms, each with a PBKDF2 hash ("pbkdf2-sha256$iterations$salt$hash", base64).</summary>
    public List<OperatorUser> Users { get; set; } = [];

    /// <summary>Optional file of "name:hash" lines (e.g. /etc/silowatch/operators, mode 0600), read at start.</summary>
    public string UsersFile { get; set; } = "";

    /// <summary>API tokens for tools (Authorization: Bearer …), each stored as the SHA-256 hex of the token.</summary>
    public List<OperatorToken> Tokens { get; set; } = [];

    /// <summary>How long a login lasts. Default 8 h.</summary>
    public TimeSpan SessionLifetime { get; set; } = TimeSpan.FromHours(8);

    /// <summary>Longest gap between two pushes of the live stream (a heartbeat of the whole state). Default 15 s.</summary>
    public TimeSpan StreamHeartbeat { get; set; } = TimeSpan.FromSeconds(15);

    /// <summary>Shortest gap between two pushes of the live stream. Default 500 ms.</summary>
    public TimeSpan StreamMinInterval { get; set; } = TimeSpan.FromMilliseconds(500);
}

public sealed class OperatorUser
{
    public string Name { get; set; } = "";

    public string PasswordHash { get; set; } = "";
}

public sealed class OperatorToken
{
    public string Name { get; set; } = "";

    /// <summary>Lower-case hex SHA-256 of the token.</summary>
    public string TokenSha256 { get; set; } = "";
}
