using Microsoft.AspNetCore.Http.HttpResults;

namespace TeachServe.Server.Experiments;

/// <summary>Server-rendered ScottPlot figures as SVG or PNG responses.</summary>
public static class PlotImages
{
    public const int Width = 900;
    public const int Height = 560;

    /// <summary>Splits <c>name.svg</c> / <c>name.png</c>; false for any other extension.</summary>
    public static bool TryParse(string file, out string name, out string format)
    {
        name = format = "";
        var dot = file.LastIndexOf('.');
        if (dot <= 0) return false;
        format = file[(dot + 1)..];
        name = file[..dot];
        return format is "svg" or "png";
    }

    public static FileContentHttpResult Render(ScottPlot.Plot plot, string format) => format == "png"
        ? TypedResults.File(plot.GetImageBytes(Width, Height, ScottPlot.ImageFormat.Png), "image/png")
        : TypedResults.File(System.Text.Encoding.UTF8.GetBytes(plot.GetSvgXml(Width, Height)), "image/svg+xml");
}
