using System.Security.Cryptography;
using System.Text;

namespace AuditSvc.Data.Teams;

/// <summary>
/// Key format: <c>ask_&lt;prefix&gt;_&lt;secret&gt;</c>. The prefix finds the row; only a SHA-256 of the whole key is
/// stored. A plain hash is enough because the secret is 256 random bits (no dictionary to guard against).
/// </summary>
public static class ApiKeySecret
{
    public const string Scheme = "ask";

    public static (string Key, string Prefix) New()
    {
        var prefix = Convert.ToHexStringLower(RandomNumberGenerator.GetBytes(6));
        var secret = Base64Url(RandomNumberGenerator.GetBytes(32));
        return ($"{Scheme}_{prefix}_{secret}", prefix);
    }

    /// <summary>The prefix of a well-formed key, else null (so a malformed header costs no database call).</summary>
    public static string? PrefixOf(string key)
    {
        var parts = key.Split('_', 3);
        return parts.Length == 3 && parts[0] == Scheme && parts[1].Length == 12 && parts[2].Length > 0 ? parts[1] : null;
    }

    public static byte[] Hash(string key) => SHA256.HashData(Encoding.UTF8.GetBytes(key));

    /// <summary>Constant-time comparison, so response time does not tell how much of a guess was right.</summary>
    public static bool Matches(string presented, byte[] storedHash) =>
        CryptographicOperations.FixedTimeEquals(Hash(presented), storedHash);

    private static string Base64Url(byte[] bytes) =>
        Convert.ToBase64String(bytes).TrimEnd('=').Replace('+', '-').Replace('/', '_');
}
