using System.Security.Cryptography;

namespace TeachServe.Server.Infrastructure;

/// <summary>Public identifiers: a type prefix and lowercase Crockford base32, so they are safe in URLs and keys.</summary>
public static class Ids
{
    private const string Alphabet = "0123456789abcdefghjkmnpqrstvwxyz";
    private static readonly System.Buffers.SearchValues<char> AlphabetValues = System.Buffers.SearchValues.Create(Alphabet);

    public static string NewProjectId() => New("prj_");

    /// <summary>A new random id with <paramref name="prefix"/> (80 random bits).</summary>
    public static string New(string prefix) => prefix + Base32(RandomNumberGenerator.GetBytes(10));

    /// <summary>Time-ordered (48-bit milliseconds, then 80 random bits) so that paging by id follows creation order.</summary>
    public static string NewSessionId(TimeProvider time)
    {
        Span<byte> bytes = stackalloc byte[16];
        var ms = time.GetUtcNow().ToUnixTimeMilliseconds();
        for (var i = 5; i >= 0; i--)
        {
            bytes[i] = (byte)(ms & 0xFF);
            ms >>= 8;
        }
        RandomNumberGenerator.Fill(bytes[6..]);
        return "ses_" + Base32(bytes);
    }

    public static string Base32(ReadOnlySpan<byte> data)
    {
        var chars = new char[(data.Length * 8 + 4) / 5];
        int buffer = 0, bits = 0, n = 0;
        foreach (var b in data)
        {
            buffer = (buffer << 8) | b;
            bits += 8;
            while (bits >= 5)
            {
                chars[n++] = Alphabet[(buffer >> (bits - 5)) & 31];
                bits -= 5;
            }
        }
        if (bits > 0) chars[n++] = Alphabet[(buffer << (5 - bits)) & 31];
        return new string(chars, 0, n);
    }

    /// <summary>Cheap shape check before a database lookup; ids never exceed this length.</summary>
    public static bool LooksLike(string? id, string prefix) =>
        id is { Length: > 4 and <= 40 } && id.StartsWith(prefix, StringComparison.Ordinal)
        && id.AsSpan(prefix.Length).IndexOfAnyExcept(AlphabetValues) < 0;
}
