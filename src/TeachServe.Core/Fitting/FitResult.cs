namespace TeachServe.Core.Fitting;

/// <summary>
/// One point of a profile log-likelihood: the profiled parameter held at its grid value, the other one at the
/// value that maximises the likelihood there.
/// </summary>
public readonly record struct ProfilePoint(double Alpha, double Lapse, double LogLikelihood);

/// <summary>
/// A profile-likelihood confidence interval: the connected set of values around the estimate with
/// 2·(ℓmax − ℓprofile) ≤ χ²₁(confidence). An end flagged open reached the end of the searched range, so the data
/// do not rule out values beyond it; the end then reports that limit of the range.
/// </summary>
public sealed record ProfileInterval(double Low, double High, bool LowOpen, bool HighOpen)
{
    public bool Contains(double value) => value >= Low && value <= High;
}

/// <summary>The profile log-likelihood of one parameter on its grid, and the interval read from it.</summary>
/// <param name="Parameter">"alpha" or "lapse".</param>
/// <param name="Points">Grid points in increasing order of the profiled parameter.</param>
public sealed record ParameterProfile(string Parameter, IReadOnlyList<ProfilePoint> Points, ProfileInterval Interval);

/// <summary>Maximum-likelihood estimates of the learner model's alpha and lapse from recorded sessions.</summary>
public sealed record FitResult
{
    public required double Alpha { get; init; }
    public required double Lapse { get; init; }

    /// <summary>q = 1/(1+e^alpha) at the estimate.</summary>
    public double Q => Model.ModelVersion.DisagreementFactor(Alpha);

    /// <summary>ℓmax, the log-likelihood (natural log) of all answers at the estimate.</summary>
    public required double MaxLogLikelihood { get; init; }

    public required ParameterProfile AlphaProfile { get; init; }
    public required ParameterProfile LapseProfile { get; init; }

    public required double Confidence { get; init; }

    /// <summary>χ²₁(confidence), the bound on 2·(ℓmax − ℓprofile) that defines the intervals.</summary>
    public required double Threshold { get; init; }

    public required int SessionCount { get; init; }

    /// <summary>Answers in all sessions (teaching and test).</summary>
    public required int AnswerCount { get; init; }

    /// <summary>Likelihood evaluations spent, over the start grid, the simplex, the profiles and the interval ends.</summary>
    public required int Evaluations { get; init; }

    /// <summary>False when the simplex stopped at its iteration limit; the best point seen is reported then.</summary>
    public required bool Converged { get; init; }
}
