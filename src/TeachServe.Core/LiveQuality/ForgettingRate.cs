namespace TeachServe.Core.LiveQuality;

/// <summary>
/// How fast a released annotator's rule drifts back to the prior: between live checks the annotator keeps its rule with
/// probability keep = (1 − PerCheck)·e^{−PerDay·days}, and otherwise holds a rule drawn afresh from the prior P0.
/// </summary>
public readonly record struct ForgettingRate
{
    /// <param name="perCheck">Probability per live check of falling back to the prior, in [0, 1).</param>
    /// <param name="perDay">Hazard per day of falling back to the prior, ≥ 0.</param>
    public ForgettingRate(double perCheck, double perDay = 0)
    {
        if (!(perCheck >= 0 && perCheck < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(perCheck), perCheck, "Must lie in [0, 1).");
        }

        if (!(perDay >= 0) || double.IsInfinity(perDay))
        {
            throw new ArgumentOutOfRangeException(nameof(perDay), perDay, "Must be a finite number ≥ 0.");
        }

        PerCheck = perCheck;
        PerDay = perDay;
    }

    public double PerCheck { get; }
    public double PerDay { get; }

    public static ForgettingRate None => default;

    /// <summary>The probability of keeping the rule over one check that came <paramref name="days"/> after the previous one.</summary>
    public double Keep(double days)
    {
        if (!(days >= 0) || double.IsInfinity(days))
        {
            throw new ArgumentOutOfRangeException(nameof(days), days, "Must be a finite number ≥ 0.");
        }

        return (1 - PerCheck) * Math.Exp(-PerDay * days);
    }
}
