using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Plots;

namespace TeachServe.Server.Experiments;

/// <summary>Server-rendered figures as SVG or PNG responses, at the report size.</summary>
public static class PlotImages
{
    public const string SvgMediaType = "image/svg+xml";
    public const string PngMediaType = "image/png";

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
        ? TypedResults.File(PlotOutput.Png(plot, PlotSize.Report), PngMediaType)
        : TypedResults.File(PlotOutput.SvgBytes(plot, PlotSize.Report), SvgMediaType);
}
