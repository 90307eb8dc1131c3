using System.Buffers.Text;
using System.Security.Cryptography;
using System.Text;

namespace TeachServe.Server.Auth;

/// <summary>
/// Keys look like <c>tso.prj_abc.SECRET</c>: a kind, the id the key belongs to, and 256 random bits.
/// The id lets the server find the one stored hash to compare against (in constant time) without an index on secrets.
/// Keys are high-entropy, so a single SHA-256 is a sufficient hash.
/// </summary>
public static class ApiKeys
{
    public const string AdminPrefix = "tsa";
    public const string OwnerPrefix = "tso";
    public const string EmbedPrefix = "tse";
    public const string SessionPrefix = "tst";
    public const int MaxLength = 256;

    public static string NewAdminKey() => $"{AdminPrefix}.{Secret()}";
    public static string NewOwnerKey(string projectId) => $"{OwnerPrefix}.{projectId}.{Secret()}";
    public static string NewEmbedKey(string projectId) => $"{EmbedPrefix}.{projectId}.{Secret()}";
    public static string NewSessionToken(string sessionId) => $"{SessionPrefix}.{sessionId}.{Secret()}";

    public static byte[] Hash(string key) => SHA256.HashData(Encoding.UTF8.GetBytes(key));

    public static bool Matches(string key, byte[] storedHash) =>
        CryptographicOperations.FixedTimeEquals(Hash(key), storedHash);

    /// <summary>Splits a presented key into its kind and the id it names; false for anything malformed.</summary>
    public static bool TryParse(string key, out string prefix, out string? scopeId)
    {
        prefix = "";
        scopeId = null;
        if (key.Length is < 8 or > MaxLength) return false;
        var parts = key.Split('.');
        switch (parts)
        {
            case [AdminPrefix, { Length: > 0 }]:
                prefix = AdminPrefix;
                return true;
            case [OwnerPrefix or EmbedPrefix or SessionPrefix, { Length: > 0 } id, { Length: > 0 }]:
                prefix = parts[0];
                scopeId = id;
                return true;
            default:
                return false;
        }
    }

    private static string Secret() => Base64Url.EncodeToString(RandomNumberGenerator.GetBytes(32));
}
