using System.Globalization;
using System.Security.Cryptography;
using System.Text;

namespace TeachServe.Server.Webhooks;

/// <summary>
/// <c>TeachServe-Signature: t=&lt;unix seconds&gt;,v1=&lt;hex HMAC-SHA256(secret, "&lt;t&gt;.&lt;body&gt;")&gt;</c>.
/// Signing the timestamp with the body lets receivers reject replays of old deliveries.
/// </summary>
public static class WebhookSignature
{
    public const string Header = "TeachServe-Signature";
    public const string DeliveryHeader = "TeachServe-Delivery";
    public const string EventHeader = "TeachServe-Event";

    public static string Create(string secret, long timestamp, string body)
    {
        var t = timestamp.ToString(CultureInfo.InvariantCulture);
        var mac = HMACSHA256.HashData(Encoding.UTF8.GetBytes(secret), Encoding.UTF8.GetBytes($"{t}.{body}"));
        return $"t={t},v1={Convert.ToHexStringLower(mac)}";
    }

    /// <summary>What a receiver does: recompute, compare in constant time, and refuse stale timestamps.</summary>
    public static bool Verify(string header, string secret, string body, DateTimeOffset now, TimeSpan tolerance)
    {
        long? t = null;
        string? v1 = null;
        foreach (var part in header.Split(','))
        {
            if (part.StartsWith("t=", StringComparison.Ordinal) && long.TryParse(part[2..], CultureInfo.InvariantCulture, out var ts)) t = ts;
            else if (part.StartsWith("v1=", StringComparison.Ordinal)) v1 = part[3..];
        }
        if (t is null || v1 is null) return false;
        if (Math.Abs(now.ToUnixTimeSeconds() - t.Value) > tolerance.TotalSeconds) return false;
        var expected = Create(secret, t.Value, body);
        return CryptographicOperations.FixedTimeEquals(Encoding.ASCII.GetBytes(expected), Encoding.ASCII.GetBytes($"t={t},v1={v1}"));
    }
}
