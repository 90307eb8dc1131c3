using System.Buffers;
using System.Text;

namespace TeachServe.Server.Webhooks;

/// <summary>
/// The webhook secret in the form the Standard Webhooks specification gives symmetric keys: <c>whsec_</c> and the
/// base64 of 24 to 64 random bytes (standard-webhooks/standard-webhooks, spec/standard-webhooks.md, "Signature
/// scheme", the table row "Secret serialization"). The key the HMAC uses is the decoded bytes, not the text.
/// </summary>
/// <remarks>
/// Secrets set before this form was required were any string of 16 to 200 characters. Such a stored secret keeps
/// working: its key is the UTF-8 bytes of the string, so a receiver gives its library <c>whsec_</c> and the base64 of
/// those bytes (docs/api.md, "Webhooks"). It is not rewritten, because the secret is write-only: the owner never sees
/// the stored value and would not learn a new one.
/// </remarks>
public static class WebhookSigningKey
{
    public const string Prefix = "whsec_";
    public const int MinBytes = 24;
    public const int MaxBytes = 64;

    private static readonly SearchValues<char> Base64Chars =
        SearchValues.Create("ABCDEFGHIJKLMNOPQRSTUVWXYZabcdefghijklmnopqrstuvwxyz0123456789+/=");

    /// <summary>
    /// True for <c>whsec_</c> followed by standard, padded base64 of <see cref="MinBytes"/> to <see cref="MaxBytes"/>
    /// bytes (no spaces or line breaks, which <see cref="Convert.TryFromBase64String"/> would otherwise skip).
    /// </summary>
    public static bool TryParse(string? secret, out byte[] key)
    {
        key = [];
        if (secret is null || !secret.StartsWith(Prefix, StringComparison.Ordinal)) return false;
        var text = secret.AsSpan(Prefix.Length);
        if (text.Length == 0 || text.Length > (MaxBytes + 2) / 3 * 4 || text.ContainsAnyExcept(Base64Chars)) return false;
        Span<byte> buffer = stackalloc byte[(MaxBytes + 2) / 3 * 3];
        if (!Convert.TryFromBase64Chars(text, buffer, out var written) || written is < MinBytes or > MaxBytes) return false;
        key = buffer[..written].ToArray();
        return true;
    }

    /// <summary>The HMAC key of a stored secret: the decoded bytes of a <c>whsec_</c> secret, else (an older secret) its UTF-8 bytes.</summary>
    public static byte[] Of(string secret) =>
        TryParse(secret, out var key) ? key : Encoding.UTF8.GetBytes(secret);
}
