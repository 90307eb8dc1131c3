using System.Buffers.Text;
using System.Text;

namespace TeachServe.Server.Infrastructure;

/// <summary>Opaque paging cursors: the last key seen, base64url-encoded so that clients do not build them.</summary>
public static class Cursor
{
    public const int DefaultLimit = 50;
    public const int MaxLimit = 500;

    public static string Encode(string lastKey) => Base64Url.EncodeToString(Encoding.UTF8.GetBytes(lastKey));

    /// <summary>
    /// The last key in <paramref name="cursor"/> (empty when none was given: keys are never empty), or 400 naming
    /// <paramref name="parameter"/>.
    /// </summary>
    public static Outcome<string> Read(string? cursor, string parameter)
    {
        if (string.IsNullOrEmpty(cursor)) return "";
        if (cursor.Length <= 200 && Base64Url.IsValid(cursor))
        {
            try
            {
                return Encoding.UTF8.GetString(Base64Url.DecodeFromChars(cursor));
            }
            catch (FormatException)
            {
                // Not ours: answered below like any other foreign cursor.
            }
        }
        return NotACursor(parameter);
    }

    /// <summary>A cursor over numeric keys: the last key (0 when none was given), or 400.</summary>
    public static Outcome<long> ReadNumber(string? cursor, string parameter)
    {
        var text = Read(cursor, parameter);
        if (!text.Succeeded) return text.Problem;
        if (text.Value.Length == 0) return 0L;
        return long.TryParse(text.Value, out var n) && n >= 0 ? n : NotACursor(parameter);
    }

    /// <summary>A page over numeric keys: the key to start after (0 for the first page) and the page size, or 400 for either.</summary>
    public static Outcome<(long After, int Take)> ReadNumberPage(string? cursor, string parameter, int? limit)
    {
        var after = ReadNumber(cursor, parameter);
        if (after.Problem is { } badCursor) return badCursor;
        var take = PageSize(limit);
        if (take.Problem is { } badLimit) return badLimit;
        return (after.Value, take.Value);
    }

    /// <summary>The page size: <see cref="DefaultLimit"/> when none was given, or 400 outside 1 to <see cref="MaxLimit"/>.</summary>
    public static Outcome<int> PageSize(int? limit) => limit switch
    {
        null => DefaultLimit,
        < 1 or > MaxLimit => Problems.BadRequest($"'limit' must be between 1 and {MaxLimit}."),
        _ => limit.Value,
    };

    private static Microsoft.AspNetCore.Http.HttpResults.ProblemHttpResult NotACursor(string parameter) => Problems.BadRequest($"'{parameter}' is not a cursor returned by this API.");
}
