using System.Text.RegularExpressions;

namespace TeachServe.Plots.Tests;

/// <summary>
/// Reads series colours back out of a rendered SVG, the way a reader would match a legend entry to a line: each legend
/// entry is its label's text followed by the entry's line; data lines are the other strokes of the data line width.
/// </summary>
public static partial class SvgSeries
{
    /// <summary>Legend label → the colour of its line (upper-case #RRGGBB).</summary>
    public static Dictionary<string, string> LegendColours(string svg) =>
        LegendEntry().Matches(svg).ToDictionary(m => System.Net.WebUtility.HtmlDecode(m.Groups["label"].Value.Trim()), m => Hex(m.Groups["colour"].Value));

    /// <summary>The colours of every stroke drawn at the data line width (legend lines included).</summary>
    public static HashSet<string> LineColours(string svg) =>
        [.. DataLine().Matches(svg).Select(m => Hex(m.Groups["colour"].Value))];

    /// <summary>Every colour the SVG strokes or fills with.</summary>
    public static HashSet<string> AllColours(string svg) =>
        [.. AnyColour().Matches(svg).Select(m => Hex(m.Groups["colour"].Value))];

    /// <summary>The SVG writer names black and white instead of writing their hex.</summary>
    public static string Hex(string colour) => colour switch
    {
        "black" => "#000000",
        "white" => "#FFFFFF",
        _ => colour.ToUpperInvariant(),
    };

    [GeneratedRegex(@"<text[^>]*>(?<label>[^<]+)</text>\s*<path fill=""none"" stroke=""(?<colour>#[0-9A-Fa-f]{6}|black)"" stroke-width=""2.5""")]
    private static partial Regex LegendEntry();

    [GeneratedRegex(@"<path fill=""none"" stroke=""(?<colour>#[0-9A-Fa-f]{6}|black)"" stroke-width=""2.5""")]
    private static partial Regex DataLine();

    [GeneratedRegex(@"(?:stroke|fill)=""(?<colour>#[0-9A-Fa-f]{6}|black|white)""")]
    private static partial Regex AnyColour();
}
