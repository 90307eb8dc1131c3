using System.Buffers.Text;
using System.Globalization;
using System.Security.Cryptography;
using System.Text;

namespace TeachServe.Server.Sessions;

/// <summary>
/// Item refs are a keyed hash of (step, item) under a per-session secret: they differ between sessions and
/// between steps, so an annotator can learn nothing from them about pool, label or repetition.
/// </summary>
public static class ItemRefs
{
    public static byte[] NewKey() => RandomNumberGenerator.GetBytes(32);

    public static string For(byte[] key, int step, int item)
    {
        Span<byte> mac = stackalloc byte[32];
        HMACSHA256.HashData(key, Encoding.ASCII.GetBytes(string.Create(CultureInfo.InvariantCulture, $"{step}:{item}")), mac);
        return "itm_" + Base64Url.EncodeToString(mac[..16]);
    }

    public static bool Matches(byte[] key, int step, int item, string presented) =>
        CryptographicOperations.FixedTimeEquals(Encoding.ASCII.GetBytes(For(key, step, item)), Encoding.ASCII.GetBytes(presented));
}
