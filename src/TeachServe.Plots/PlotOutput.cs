using System.Text;
using System.Text.RegularExpressions;
using ScottPlot;

namespace TeachServe.Plots;

/// <summary>Renders a plot to SVG text, PNG bytes or both files; the same plot gives the same bytes every time.</summary>
public static partial class PlotOutput
{
    /// <summary>
    /// SVG text. The writer names the server's font, which a browser may lack and replace by a serif face, so the text
    /// asks for a sans-serif stack instead (the layout was measured with a sans face too). The writer also numbers
    /// clip paths with a process-wide counter; they are renumbered from 1 so that equal plots give equal SVG.
    /// </summary>
    public static string Svg(Plot plot, PlotSize size)
    {
        ArgumentNullException.ThrowIfNull(plot);
        var svg = FontFamily().Replace(plot.GetSvgXml(size.Width, size.Height), "font-family=\"system-ui, 'DejaVu Sans', Arial, sans-serif\"");
        var ids = new Dictionary<string, string>(StringComparer.Ordinal);
        return ClipId().Replace(svg, m =>
        {
            if (!ids.TryGetValue(m.Value, out var id))
            {
                id = $"clip{ids.Count + 1}";
                ids[m.Value] = id;
            }
            return id;
        });
    }

    public static byte[] SvgBytes(Plot plot, PlotSize size) => Encoding.UTF8.GetBytes(Svg(plot, size));

    public static byte[] Png(Plot plot, PlotSize size)
    {
        ArgumentNullException.ThrowIfNull(plot);
        return plot.GetImageBytes(size.Width, size.Height, ImageFormat.Png);
    }

    /// <summary>Writes <paramref name="pathWithoutExtension"/>.png and .svg.</summary>
    public static void SavePngAndSvg(Plot plot, string pathWithoutExtension, PlotSize size)
    {
        File.WriteAllBytes(pathWithoutExtension + ".png", Png(plot, size));
        File.WriteAllText(pathWithoutExtension + ".svg", Svg(plot, size));
    }

    [GeneratedRegex("font-family=\"[^\"]*\"")]
    private static partial Regex FontFamily();

    [GeneratedRegex(@"\bcl_[0-9a-f]+\b")]
    private static partial Regex ClipId();
}
