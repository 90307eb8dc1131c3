namespace TeachServe.Core.Fitting;

/// <summary>Search range, profile grid, tolerances and iteration limits of <see cref="LearnerFit.Fit"/>.</summary>
public sealed record FitOptions
{
    /// <summary>Smallest alpha searched; alpha lives in (0, 20], and an interval reaching this end is open-ended.</summary>
    public double MinAlpha { get; init; } = 0.01;

    /// <summary>Largest alpha searched (q = 1/(1+e^20) ≈ 2e-9: the learner practically always switches).</summary>
    public double MaxAlpha { get; init; } = 20.0;

    /// <summary>Largest lapse searched; lapse lives in [0, 1), and at 1 the answers carry no information.</summary>
    public double MaxLapse { get; init; } = 0.99;

    /// <summary>Coverage of the profile-likelihood intervals.</summary>
    public double Confidence { get; init; } = 0.95;

    /// <summary>Grid points of each profile (alpha log-spaced; lapse 0 then logit-spaced).</summary>
    public int ProfilePoints { get; init; } = 25;

    /// <summary>Nelder–Mead stop: relative spread of the simplex's function values.</summary>
    public double SimplexTolerance { get; init; } = 1e-10;

    public int MaxSimplexIterations { get; init; } = 2000;

    /// <summary>Tolerance of the one-dimensional maximisations behind each profile point (in log alpha, or in lapse).</summary>
    public double InnerTolerance { get; init; } = 1e-6;

    public int MaxInnerIterations { get; init; } = 200;

    /// <summary>Tolerance of the interval ends (in log alpha, or in lapse), found by Brent's root finder.</summary>
    public double CrossingTolerance { get; init; } = 1e-5;

    public int MaxCrossingIterations { get; init; } = 100;

    internal void Validate()
    {
        if (!(MinAlpha > 0 && MinAlpha < MaxAlpha && MaxAlpha <= 20.0))
        {
            throw new ArgumentOutOfRangeException(nameof(MinAlpha), $"Need 0 < MinAlpha < MaxAlpha ≤ 20; got {MinAlpha}, {MaxAlpha}.");
        }

        if (!(MaxLapse > 0 && MaxLapse < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(MaxLapse), MaxLapse, "Must lie strictly between 0 and 1.");
        }

        if (!(Confidence > 0 && Confidence < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(Confidence), Confidence, "Must lie strictly between 0 and 1.");
        }

        ArgumentOutOfRangeException.ThrowIfLessThan(ProfilePoints, 3, nameof(ProfilePoints));
        Positive(SimplexTolerance, nameof(SimplexTolerance));
        Positive(InnerTolerance, nameof(InnerTolerance));
        Positive(CrossingTolerance, nameof(CrossingTolerance));
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(MaxSimplexIterations, nameof(MaxSimplexIterations));
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(MaxInnerIterations, nameof(MaxInnerIterations));
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(MaxCrossingIterations, nameof(MaxCrossingIterations));
    }

    private static void Positive(double value, string name)
    {
        if (!(value > 0) || double.IsPositiveInfinity(value))
        {
            throw new ArgumentOutOfRangeException(name, value, "Must be positive and finite.");
        }
    }
}
