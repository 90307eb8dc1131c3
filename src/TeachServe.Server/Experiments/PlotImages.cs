using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Plots;

namespace TeachServe.Server.Experiments;

/// <summary>A drawn figure and the format it was asked for (<c>svg</c> or <c>png</c>).</summary>
public sealed record PlotFile(ScottPlot.Plot Plot, string Format);

/// <summary>Server-rendered figures as SVG or PNG responses, at the report size; CSV exports as text responses.</summary>
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

    public static FileContentHttpResult Render(PlotFile file) => file.Format == "png"
        ? TypedResults.File(PlotOutput.Png(file.Plot, PlotSize.Report), PngMediaType)
        : TypedResults.File(PlotOutput.SvgBytes(file.Plot, PlotSize.Report), SvgMediaType);

    public const string CsvMediaType = "text/csv; charset=utf-8";

    /// <summary>A CSV export (reports, simulation results) as the response body.</summary>
    public static ContentHttpResult Csv(string text) => TypedResults.Text(text, CsvMediaType);
}
