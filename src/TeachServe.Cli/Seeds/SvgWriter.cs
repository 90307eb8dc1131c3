using System.Globalization;
using System.Text;

namespace TeachServe.Cli.Seeds;

/// <summary>
/// Builds a small self-contained SVG: no scripts, no links, single-quoted attributes (so the JSON line stays readable),
/// coordinates rounded to 0.1 so files are compact and identical on every platform.
/// </summary>
internal sealed class SvgWriter
{
    private readonly StringBuilder _text = new();

    public SvgWriter(int width, int height, string description) =>
        _text.Append(CultureInfo.InvariantCulture,
            $"<svg xmlns='http://www.w3.org/2000/svg' width='{width}' height='{height}' viewBox='0 0 {width} {height}' role='img' aria-label='{description}'>");

    public SvgWriter Add(string element)
    {
        _text.Append(element);
        return this;
    }

    public override string ToString() => _text + "</svg>";

    /// <summary>A coordinate or length with at most one decimal, never "-0".</summary>
    public static string N(double value)
    {
        var rounded = Math.Round(value, 1, MidpointRounding.AwayFromZero);
        if (rounded == 0)
            rounded = 0; // turns -0 into 0
        return rounded.ToString("0.#", CultureInfo.InvariantCulture);
    }

    /// <summary>The colour a fraction <paramref name="t"/> of the way from <paramref name="from"/> to <paramref name="to"/>.</summary>
    public static string Mix((int R, int G, int B) from, (int R, int G, int B) to, double t)
    {
        t = Math.Clamp(t, 0, 1);
        int Channel(int a, int b) => (int)Math.Round(a + (b - a) * t, MidpointRounding.AwayFromZero);
        return string.Create(CultureInfo.InvariantCulture, $"#{Channel(from.R, to.R):x2}{Channel(from.G, to.G):x2}{Channel(from.B, to.B):x2}");
    }
}
