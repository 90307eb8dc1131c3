using System.Globalization;

namespace TeachServe.Server.OwnerConsole;

/// <summary>How the console writes numbers, shares, durations and times (invariant culture, UTC).</summary>
public static class ConsoleFormat
{
    public static string N(double value, string format = "0.###") => value.ToString(format, CultureInfo.InvariantCulture);

    public static string N(int value) => value.ToString(CultureInfo.InvariantCulture);

    public static string Pct(double? value) => value is { } v ? (v * 100).ToString(v < 0.1 ? "0.0" : "0", CultureInfo.InvariantCulture) + " %" : "–";

    public static string Duration(TimeSpan? span) => span switch
    {
        null => "–",
        { TotalMinutes: < 1 } s => $"{Math.Max(1, (int)s.TotalSeconds)} s",
        { TotalHours: < 1 } s => $"{(int)s.TotalMinutes} min",
        { } s => $"{(int)s.TotalHours} h {s.Minutes} min",
    };

    public static string When(DateTimeOffset at) => at.UtcDateTime.ToString("yyyy-MM-dd HH:mm 'UTC'", CultureInfo.InvariantCulture);
}
