using System.Collections.Concurrent;
using System.Net;
using System.Security.Cryptography;
using System.Text;
using Microsoft.Extensions.Options;

namespace SiloWatch.Service.StatusPage;

/// <summary>
/// Who may read and who may act on the status page: reading from loopback (or anywhere with
/// StatusPage:AllowRemoteRead); acting with a login session (cookie, plus the action header a
/// cross-site form cannot send) or an API token. Sessions live in memory and end with the process.
/// </summary>
public sealed class OperatorAccess
{
    public const string SessionCookie = "silowatch_session";
    public const string ActionHeader = "X-SiloWatch-Action";

    private readonly StatusPageOptions _options;
    private readonly TimeProvider _time;
    private readonly ILogger<OperatorAccess> _logger;
    private readonly Dictionary<string, string> _users = new(StringComparer.Ordinal);
    private readonly Dictionary<string, byte[]> _tokens = new(StringComparer.Ordinal);
    private readonly ConcurrentDictionary<string, (string User, long ExpiresMs)> _sessions = new(StringComparer.Ordinal);

    public OperatorAccess(IOptions<StatusPageOptions> options, IHostEnvironment env, TimeProvider time, ILogger<OperatorAccess> logger)
    {
        _options = options.Value;
        _time = time;
        _logger = logger;
        foreach (var u in _options.Users)
        {
            Add(u.Name, u.PasswordHash, "StatusPage:Users");
        }

        if (_options.UsersFile.Length > 0)
        {
            var path = Path.IsPathRooted(_options.UsersFile) ? _options.UsersFile : Path.Combine(env.ContentRootPath, _options.UsersFile);
            foreach (var line in File.ReadAllLines(path))
            {
                var text = line.Trim();
                if (text.Length == 0 || text.StartsWith('#'))
                {
                    continue;
                }

                var colon = text.IndexOf(':', StringComparison.Ordinal);
                Add(colon > 0 ? text[..colon] : "", colon > 0 ? text[(colon + 1)..] : "", path);
            }
        }

        foreach (var t in _options.Tokens)
        {
            if (t.Name.Length == 0 || t.TokenSha256.Length != 64 || !t.TokenSha256.All(Uri.IsHexDigit))
            {
                throw new InvalidOperationException("StatusPage:Tokens: each token needs a Name and TokenSha256 (64 hex digits of the SHA-256 of the token, never the token itself)");
            }

            _tokens[t.Name] = Convert.FromHexString(t.TokenSha256);
        }

        _logger.LogInformation("Status page: {Users} user(s) and {Tokens} token(s) may act on alarms", _users.Count, _tokens.Count);
    }

    public bool CanRead(HttpContext http) => _options.AllowRemoteRead || IsLoopback(http.Connection.RemoteIpAddress);

    /// <summary>Checks a name and password; on success returns a new session id.</summary>
    public async Task<string?> LoginAsync(string name, string password, CancellationToken ct)
    {
        if (_users.TryGetValue(name, out var hash) && OperatorPasswords.Verify(password, hash))
        {
            var id = Convert.ToBase64String(RandomNumberGenerator.GetBytes(32)).Replace('+', '-').Replace('/', '_').TrimEnd('=');
            _sessions[id] = (name, Now() + (long)_options.SessionLifetime.TotalMilliseconds);
            _logger.LogInformation("Status page: {User} logged in", name);
            return id;
        }

        // Slow down guessing; say nothing of which part was wrong. The password is never logged.
        _logger.LogWarning("Status page: failed login for {User}", name.Length > 64 ? name[..64] : name);
        await Task.Delay(TimeSpan.FromSeconds(1), _time, ct).ConfigureAwait(false);
        return null;
    }

    public void Logout(string? session)
    {
        if (session is not null)
        {
            _sessions.TryRemove(session, out _);
        }
    }

    /// <summary>The user of a request's session cookie, or null (for showing who is logged in).</summary>
    public string? SessionUser(HttpContext http)
    {
        if (http.Request.Cookies.TryGetValue(SessionCookie, out var id) && id is not null && _sessions.TryGetValue(id, out var s))
        {
            if (s.ExpiresMs > Now())
            {
                return s.User;
            }

            _sessions.TryRemove(id, out _);
        }

        return null;
    }

    /// <summary>The user a request may act as: a bearer token, or a session with the action header. Null: not allowed.</summary>
    public string? ActingUser(HttpContext http)
    {
        var auth = http.Request.Headers.Authorization.ToString();
        if (auth.StartsWith("Bearer ", StringComparison.Ordinal))
        {
            var presented = SHA256.HashData(Encoding.UTF8.GetBytes(auth["Bearer ".Length..].Trim()));
            foreach (var (name, hash) in _tokens)
            {
                if (CryptographicOperations.FixedTimeEquals(presented, hash))
                {
                    return name;
                }
            }

            return null;
        }

        return http.Request.Headers.ContainsKey(ActionHeader) ? SessionUser(http) : null;
    }

    private void Add(string name, string hash, string source)
    {
        name = name.Trim();
        hash = hash.Trim();
        if (name.Length == 0 || !OperatorPasswords.IsWellFormed(hash))
        {
            // The value may be a password in clear: never echo it.
            throw new InvalidOperationException($"{source}: user '{name}' needs a PasswordHash of the form {OperatorPasswords.Scheme}$iterations$salt$hash (see README, \"Status page\"); a password in clear is refused");
        }

        _users[name] = hash;
    }

    private long Now() => _time.GetUtcNow().ToUnixTimeMilliseconds();

    private static bool IsLoopback(IPAddress? address) => address is not null && IPAddress.IsLoopback(address.IsIPv4MappedToIPv6 ? address.MapToIPv4() : address);
}
