using ScottPlot;

namespace TeachServe.Plots;

/// <summary>The pixel size of a picture.</summary>
public readonly record struct PlotSize(int Width, int Height)
{
    /// <summary>Report figures: CLI files and the API's PNG/SVG endpoints.</summary>
    public static readonly PlotSize Report = new(900, 560);

    /// <summary>The owner console's pictures, which sit beside their tables.</summary>
    public static readonly PlotSize Console = new(560, 360);
}

/// <summary>
/// TeachServe's look for every plot: a sans-serif face, dark ink on white, a light grid, only the left and bottom axes
/// drawn, no minor ticks, and the legend beside the data in a plain box, never over it.
/// </summary>
public static class PlotTheme
{
    public static readonly Color Ink = Color.FromHex("#222222");
    public static readonly Color GridLine = Color.FromHex("#E5E5E5");

    /// <summary>
    /// The first of these sans-serif faces that is installed. ScottPlot's own "sans" pick falls back to a serif face on
    /// a machine without the fonts it looks for, so the choice is made here.
    /// </summary>
    public static readonly string Face = new[] { "DejaVu Sans", "Liberation Sans", "Arial", "Helvetica", "Noto Sans" }
        .FirstOrDefault(Installed) ?? Fonts.Sans;

    public static Plot Create(string title, string xLabel, string yLabel)
    {
        var plot = new Plot();
        plot.Font.Set(Face);
        plot.FigureBackground.Color = Colors.White;
        plot.DataBackground.Color = Colors.White;
        plot.Title(title, size: 15);
        plot.Axes.Title.Label.ForeColor = Ink;
        plot.XLabel(xLabel, size: 13);
        plot.YLabel(yLabel, size: 13);
        plot.Axes.Bottom.Label.Bold = false;
        plot.Axes.Left.Label.Bold = false;
        plot.Axes.Color(Ink);
        foreach (var axis in new IAxis[] { plot.Axes.Bottom, plot.Axes.Left })
        {
            axis.TickGenerator = new ScottPlot.TickGenerators.NumericAutomatic { TargetTickCount = 7 };
            axis.TickLabelStyle.FontSize = 12;
            axis.MinorTickStyle.Length = 0;
            axis.MajorTickStyle.Length = 4;
        }
        plot.Axes.Top.FrameLineStyle.Width = 0;
        plot.Axes.Right.FrameLineStyle.Width = 0;
        plot.Grid.MajorLineColor = GridLine;
        plot.Grid.MinorLineWidth = 0;
        return plot;
    }

    /// <summary>Ticks on whole numbers only, for steps and counts.</summary>
    public static void IntegerTicks(IAxis axis)
    {
        ArgumentNullException.ThrowIfNull(axis);
        axis.TickGenerator = new ScottPlot.TickGenerators.NumericAutomatic { IntegerTicksOnly = true, TargetTickCount = 8 };
    }

    /// <summary>
    /// Shows <paramref name="items"/> as the legend, right of the data, in the order given. Items without a label are
    /// left out, and a figure without any has no legend: a lone series is named by the title and axis labels.
    /// </summary>
    public static void Legend(Plot plot, IEnumerable<LegendItem> items)
    {
        ArgumentNullException.ThrowIfNull(plot);
        var legend = plot.Legend;
        legend.DisplayPlottableLegendItems = false;
        legend.ManualItems.Clear();
        legend.ManualItems.AddRange(items.Where(i => !string.IsNullOrEmpty(i.LabelText)));
        if (legend.ManualItems.Count == 0) return;
        legend.FontName = Face;
        legend.SetBestFontOnEachRender = false;
        legend.FontSize = 12;
        legend.FontColor = Ink;
        legend.OutlineColor = GridLine;
        legend.OutlineWidth = 1;
        legend.ShadowColor = Colors.Transparent;
        legend.BackgroundColor = Colors.White;
        plot.ShowLegend(Edge.Right).Alignment = Alignment.UpperCenter;
    }

    /// <summary>A legend entry for a line series with its marker.</summary>
    public static LegendItem LineItem(string label, SeriesStyle style) => Item(label, style, Marks.LineWidth, fill: false);

    /// <summary>A legend entry for markers without a line.</summary>
    public static LegendItem PointItem(string label, SeriesStyle style) => Item(label, style, 0, fill: false);

    /// <summary>A legend entry for bars: a patch of the colour with the marker in white on it.</summary>
    public static LegendItem BarItem(string label, SeriesStyle style) => Item(label, style, 0, fill: true);

    private static LegendItem Item(string label, SeriesStyle style, float lineWidth, bool fill) => new()
    {
        LabelText = label,
        LineColor = style.Color,
        LineWidth = lineWidth,
        FillColor = fill ? style.Color.WithAlpha(Marks.BarOpacity) : Colors.Transparent,
        MarkerShape = style.Marker,
        MarkerSize = Marks.MarkerSize,
        MarkerFillColor = fill ? Colors.White : style.Color,
        MarkerLineColor = fill ? Colors.White : style.Color,
        MarkerLineWidth = 1.5f,
    };

    private static bool Installed(string family)
    {
        using var typeface = SkiaSharp.SKFontManager.Default.MatchFamily(family);
        return typeface?.FamilyName == family;
    }
}
