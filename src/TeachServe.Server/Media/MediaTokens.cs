using System.Buffers.Text;
using System.Globalization;
using System.Security.Cryptography;
using System.Text;

namespace TeachServe.Server.Media;

/// <summary>
/// The random-looking last segment of a test item's image address: a keyed hash of (step, item) under the session's
/// secret ref key, in a domain of its own so it is not the item ref. It names nothing, differs between sessions and
/// steps, and works only for the session's current step (<see cref="MediaApi"/>), so it is usable as an
/// <c>&lt;img src&gt;</c> without the session token and stops working once the step is answered.
/// </summary>
public static class MediaTokens
{
    public const int Length = 22;

    public static string For(byte[] key, int step, int item)
    {
        Span<byte> mac = stackalloc byte[32];
        HMACSHA256.HashData(key, Encoding.ASCII.GetBytes(string.Create(CultureInfo.InvariantCulture, $"media:{step}:{item}")), mac);
        return Base64Url.EncodeToString(mac[..16]);
    }

    public static bool Matches(byte[] key, int step, int item, string presented) =>
        presented.Length == Length
        && CryptographicOperations.FixedTimeEquals(Encoding.ASCII.GetBytes(For(key, step, item)), Encoding.UTF8.GetBytes(presented));

    public static string Path(string sessionId, string token) => $"/api/v1/sessions/{sessionId}/media/{token}";
}
