using System.Globalization;
using System.Security.Cryptography;
using System.Text;

namespace TeachServe.Server.Tests;

/// <summary>
/// What a receiver does, written from the Standard Webhooks specification alone (standard-webhooks/standard-webhooks,
/// spec/standard-webhooks.md, "Signature scheme", "Webhook headers", "Verifying signatures") and sharing no code with
/// the server's signer: decode the <c>whsec_</c> secret, sign <c>"{webhook-id}.{webhook-timestamp}.{body}"</c> with
/// HMAC-SHA256, compare in constant time with each <c>v1,</c> entry of the space-delimited <c>webhook-signature</c>,
/// and refuse a timestamp outside the tolerance.
/// </summary>
public static class StandardWebhooksVerifier
{
    public static bool Verify(
        string secret, string? id, string? timestamp, string? signatures, string body, DateTimeOffset now, TimeSpan tolerance)
    {
        if (string.IsNullOrEmpty(id) || string.IsNullOrEmpty(timestamp) || string.IsNullOrEmpty(signatures)) return false;
        if (!long.TryParse(timestamp, NumberStyles.None, CultureInfo.InvariantCulture, out var seconds)) return false;
        if (Math.Abs(now.ToUnixTimeSeconds() - seconds) > tolerance.TotalSeconds) return false;

        var key = Convert.FromBase64String(secret.StartsWith("whsec_", StringComparison.Ordinal) ? secret["whsec_".Length..] : secret);
        var expected = HMACSHA256.HashData(key, Encoding.UTF8.GetBytes(id + "." + timestamp + "." + body));
        foreach (var entry in signatures.Split(' ', StringSplitOptions.RemoveEmptyEntries))
        {
            var comma = entry.IndexOf(',', StringComparison.Ordinal);
            // v1a (asymmetric) and unknown versions are skipped, not failed: another entry may match.
            if (comma < 0 || entry[..comma] != "v1") continue;
            var given = new byte[expected.Length + 3];
            if (Convert.TryFromBase64String(entry[(comma + 1)..], given, out var length) && length == expected.Length
                && CryptographicOperations.FixedTimeEquals(given.AsSpan(0, length), expected))
                return true;
        }
        return false;
    }
}
