namespace TeachServe.Core.Statistics;

/// <summary>
/// The running always-valid p-value of one experiment metric: the minimum of <c>min(1, 1/Λk)</c> over the
/// looks so far (Johari, Pekelis &amp; Walsh 2017). It never increases, and stopping the first time it is
/// ≤ α keeps the type I error at α however often one looks.
/// </summary>
/// <remarks>
/// Each look must be the mixture likelihood ratio of all data so far on the same stream, with the same θ0,
/// σ² and τ² (e.g. from <see cref="AlwaysValid.MixtureLikelihoodRatio"/> or
/// <see cref="AlwaysValid.TwoProportionMixtureLikelihoodRatio"/>). Not thread-safe.
/// </remarks>
public sealed class AlwaysValidMonitor
{
    /// <summary>The always-valid p-value so far; 1 before the first look.</summary>
    public double PValue { get; private set; } = 1.0;

    /// <summary>The number of looks recorded.</summary>
    public int Looks { get; private set; }

    /// <summary>Records a look with mixture likelihood ratio <paramref name="likelihoodRatio"/> and returns the running p-value.</summary>
    public double Observe(double likelihoodRatio)
    {
        PValue = Math.Min(PValue, AlwaysValid.PValueOf(likelihoodRatio));
        Looks++;
        return PValue;
    }

    /// <summary>Records a look at a normal mean (see <see cref="AlwaysValid.MixtureLikelihoodRatio"/>).</summary>
    public double ObserveMean(int n, double mean, double theta0, double sigma2, double tau2) =>
        Observe(AlwaysValid.MixtureLikelihoodRatio(n, mean, theta0, sigma2, tau2));

    /// <summary>Records a look at two proportions (see <see cref="AlwaysValid.TwoProportionMixtureLikelihoodRatio"/>).</summary>
    public double ObserveTwoProportions(int x1, int n1, int x2, int n2, double tau2) =>
        Observe(AlwaysValid.TwoProportionMixtureLikelihoodRatio(x1, n1, x2, n2, tau2));
}
