namespace TeachServe.Core.Statistics;

/// <summary>
/// Always-valid p-values by the mixture sequential probability ratio test (mSPRT) of Johari, Pekelis &amp;
/// Walsh, "Always valid inference: continuous monitoring of A/B tests" (2017, arXiv:1512.04922): a normal
/// mean θ is tested against θ0 with known variance σ² per observation, mixing the alternatives over
/// θ ~ N(θ0, τ²). The mixture likelihood ratio Λ is a martingale under H0, so (Ville's inequality)
/// <c>P(Λn ≥ 1/α for some n) ≤ α</c> and an experiment may be looked at after every annotator.
/// </summary>
/// <remarks>
/// For one look the p-value is <c>min(1, 1/Λ)</c>; across looks it is the running minimum
/// (<see cref="AlwaysValidMonitor"/>). Arguments are validated with <see cref="ArgumentOutOfRangeException"/>;
/// no observations (n = 0) give Λ = 1 and p = 1.
/// </remarks>
public static class AlwaysValid
{
    /// <summary>
    /// The mixture likelihood ratio after <paramref name="n"/> observations with sample mean <paramref name="mean"/>
    /// (Johari, Pekelis &amp; Walsh 2017):
    /// <c>Λ = √(σ²/(σ² + nτ²))·exp(n²τ²(x̄ − θ0)²/(2σ²(σ² + nτ²)))</c>. May be +∞ for overwhelming evidence.
    /// </summary>
    /// <param name="n">Observations so far, ≥ 0.</param>
    /// <param name="mean">Their mean x̄ (finite).</param>
    /// <param name="theta0">The mean under H0 (finite).</param>
    /// <param name="sigma2">Variance of one observation, positive.</param>
    /// <param name="tau2">Variance of the mixing distribution, positive; it sets which effect sizes the test is most sensitive to.</param>
    public static double MixtureLikelihoodRatio(int n, double mean, double theta0, double sigma2, double tau2)
    {
        Guard.NonNegative(n, nameof(n));
        Guard.Positive(sigma2, nameof(sigma2));
        Guard.Positive(tau2, nameof(tau2));
        if (!double.IsFinite(mean) || !double.IsFinite(theta0))
        {
            throw new ArgumentOutOfRangeException(nameof(mean), mean, "The mean and theta0 must be finite.");
        }

        return n == 0 ? 1.0 : Math.Exp(LogRatioForEstimate(mean - theta0, sigma2 / n, tau2));
    }

    /// <summary>The always-valid p-value of one look, <c>min(1, 1/Λ)</c>.</summary>
    public static double PValue(int n, double mean, double theta0, double sigma2, double tau2) =>
        PValueOf(MixtureLikelihoodRatio(n, mean, theta0, sigma2, tau2));

    /// <summary>
    /// The mixture likelihood ratio for the difference of two proportions <c>p1 − p2 = 0</c> (e.g. two arms'
    /// pass rates), by the normal approximation of Johari, Pekelis &amp; Walsh 2017 with the plug-in variance
    /// <c>v = p̂1(1 − p̂1)/n1 + p̂2(1 − p̂2)/n2</c> of the difference of sample proportions:
    /// <c>Λ = √(v/(v + τ²))·exp(τ²d²/(2v(v + τ²)))</c>, which is the one-sample formula with σ²/n replaced by v.
    /// </summary>
    /// <remarks>
    /// Returns 1 (no evidence) when an arm is empty or v = 0 (every observation in both arms alike), where the
    /// normal approximation has no footing; a small-sample burn-in before trusting the p-value is advisable.
    /// </remarks>
    public static double TwoProportionMixtureLikelihoodRatio(int x1, int n1, int x2, int n2, double tau2)
    {
        Guard.Count(x1, n1, nameof(x1), nameof(n1));
        Guard.Count(x2, n2, nameof(x2), nameof(n2));
        Guard.Positive(tau2, nameof(tau2));
        if (n1 == 0 || n2 == 0)
        {
            return 1.0;
        }

        double p1 = (double)x1 / n1, p2 = (double)x2 / n2;
        var v = (p1 * (1 - p1) / n1) + (p2 * (1 - p2) / n2);
        return v > 0 ? Math.Exp(LogRatioForEstimate(p1 - p2, v, tau2)) : 1.0;
    }

    /// <summary>The always-valid p-value of one look at two proportions, <c>min(1, 1/Λ)</c>.</summary>
    public static double TwoProportionPValue(int x1, int n1, int x2, int n2, double tau2) =>
        PValueOf(TwoProportionMixtureLikelihoodRatio(x1, n1, x2, n2, tau2));

    /// <summary><c>min(1, 1/Λ)</c> for a likelihood ratio Λ ≥ 0 (Λ = +∞ gives 0).</summary>
    public static double PValueOf(double likelihoodRatio)
    {
        if (!(likelihoodRatio >= 0))
        {
            throw new ArgumentOutOfRangeException(nameof(likelihoodRatio), likelihoodRatio, "Must be a non-negative likelihood ratio.");
        }

        return likelihoodRatio <= 1 ? 1.0 : 1.0 / likelihoodRatio;
    }

    /// <summary>
    /// ln Λ for an estimate at distance <paramref name="delta"/> from θ0 with sampling variance
    /// <paramref name="variance"/>: <c>½ln(v/(v + τ²)) + τ²δ²/(2v(v + τ²))</c>.
    /// </summary>
    private static double LogRatioForEstimate(double delta, double variance, double tau2)
    {
        var total = variance + tau2;
        return (0.5 * Math.Log(variance / total)) + (tau2 * delta * delta / (2 * variance * total));
    }
}
