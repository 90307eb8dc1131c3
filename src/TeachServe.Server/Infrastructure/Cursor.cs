using System.Buffers.Text;
using System.Text;

namespace TeachServe.Server.Infrastructure;

/// <summary>Opaque paging cursors: the last key seen, base64url-encoded so that clients do not build them.</summary>
public static class Cursor
{
    public const int DefaultLimit = 50;
    public const int MaxLimit = 500;

    public static string Encode(string lastKey) => Base64Url.EncodeToString(Encoding.UTF8.GetBytes(lastKey));

    public static string? Decode(string? cursor, string parameter)
    {
        if (string.IsNullOrEmpty(cursor)) return null;
        if (cursor.Length > 200 || !Base64Url.IsValid(cursor))
            throw ApiProblemException.BadRequest($"'{parameter}' is not a cursor returned by this API.");
        try
        {
            return Encoding.UTF8.GetString(Base64Url.DecodeFromChars(cursor));
        }
        catch (FormatException)
        {
            throw ApiProblemException.BadRequest($"'{parameter}' is not a cursor returned by this API.");
        }
    }

    public static long? DecodeNumber(string? cursor, string parameter)
    {
        var text = Decode(cursor, parameter);
        if (text is null) return null;
        return long.TryParse(text, out var n) && n >= 0
            ? n
            : throw ApiProblemException.BadRequest($"'{parameter}' is not a cursor returned by this API.");
    }

    public static int Limit(int? limit) => limit switch
    {
        null => DefaultLimit,
        < 1 or > MaxLimit => throw ApiProblemException.BadRequest($"'limit' must be between 1 and {MaxLimit}."),
        _ => limit.Value,
    };
}
