using System.Globalization;
using System.Security.Cryptography;
using System.Text;

namespace TeachServe.Server.Webhooks;

/// <summary>
/// Signs a delivery as the Standard Webhooks specification says (standard-webhooks/standard-webhooks,
/// spec/standard-webhooks.md, "Signature scheme" and "Webhook headers"): HMAC-SHA256 with the secret's key over
/// <c>"{webhook-id}.{webhook-timestamp}.{body}"</c>, sent as <c>webhook-signature: v1,&lt;base64&gt;</c>. The id is
/// the message's, the same on every retry; the timestamp is the attempt's, so a receiver that refuses stale
/// timestamps refuses replays of an old attempt, while the id lets it drop a message it has already processed.
/// </summary>
/// <remarks>
/// Verifying is the receiver's job and is left out of the server on purpose; the tests verify with their own
/// implementation written from the specification (<c>StandardWebhooksVerifier</c> in the server tests).
/// </remarks>
public static class WebhookSignature
{
    public const string IdHeader = "webhook-id";
    public const string TimestampHeader = "webhook-timestamp";
    public const string SignatureHeader = "webhook-signature";

    /// <summary>The <c>webhook-signature</c> value for one key: <c>v1,</c> and the base64 of the MAC.</summary>
    public static string Sign(byte[] key, string id, long timestamp, string body)
    {
        var mac = HMACSHA256.HashData(key, Encoding.UTF8.GetBytes($"{id}.{timestamp.ToString(CultureInfo.InvariantCulture)}.{body}"));
        return "v1," + Convert.ToBase64String(mac);
    }
}
