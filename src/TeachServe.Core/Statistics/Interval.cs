namespace TeachServe.Core.Statistics;

/// <summary>A closed interval <c>[Low, High]</c>, e.g. a confidence interval.</summary>
/// <remarks>Methods that cannot form an interval (too little data) return <c>(NaN, NaN)</c> and say so.</remarks>
public readonly record struct Interval(double Low, double High)
{
    public double Width => High - Low;

    public bool Contains(double value) => value >= Low && value <= High;
}
