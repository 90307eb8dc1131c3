using ScottPlot;

namespace TeachServe.Plots;

/// <summary>
/// The eight colours of Okabe, M. &amp; Ito, K., "Color Universal Design (CUD): How to make figures and presentations
/// that are friendly to colorblind people", 2008. Every pair stays distinguishable for the common forms of colour
/// vision deficiency (protan, deutan, tritan), which no default cycle of a plotting library promises.
/// </summary>
public static class OkabeIto
{
    public static readonly Color Black = Color.FromHex("#000000");
    public static readonly Color Orange = Color.FromHex("#E69F00");
    public static readonly Color SkyBlue = Color.FromHex("#56B4E9");
    public static readonly Color BluishGreen = Color.FromHex("#009E73");
    /// <summary>Low contrast on white: for fills, or for lines only when every other colour is taken.</summary>
    public static readonly Color Yellow = Color.FromHex("#F0E442");
    public static readonly Color Blue = Color.FromHex("#0072B2");
    public static readonly Color Vermillion = Color.FromHex("#D55E00");
    public static readonly Color ReddishPurple = Color.FromHex("#CC79A7");

    /// <summary>The eight, in the order of the 2008 paper.</summary>
    public static readonly IReadOnlyList<Color> All = [Black, Orange, SkyBlue, BluishGreen, Yellow, Blue, Vermillion, ReddishPurple];
}
