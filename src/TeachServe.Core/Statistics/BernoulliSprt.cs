using MathNet.Numerics.RootFinding;

namespace TeachServe.Core.Statistics;

/// <summary>
/// Wald's sequential probability ratio test for a Bernoulli error rate, H0: p ≤ p0 against H1: p ≥ p1
/// (Wald, "Sequential tests of statistical hypotheses", Ann. Math. Stat. 16, 1945).
/// </summary>
/// <remarks>
/// After <c>n</c> trials with <c>e</c> errors the log-likelihood ratio is
/// <c>e·ln(p1/p0) + (n − e)·ln((1 − p1)/(1 − p0))</c>. The test accepts H1 once it reaches
/// <c>ln A = ln((1 − β)/α)</c> and H0 once it falls to <c>ln B = ln(β/(1 − α))</c>. These are Wald's
/// approximate bounds: the achieved error rates α′, β′ satisfy <c>α′ ≤ α/(1 − β)</c>, <c>β′ ≤ β/(1 − α)</c>
/// and <c>α′ + β′ ≤ α + β</c>. <see cref="OperatingCharacteristic"/> and <see cref="ExpectedSampleNumber"/>
/// are Wald's approximations, which ignore the overshoot of the last step over a bound.
/// </remarks>
public sealed class BernoulliSprt
{
    // Below this |h| the OC and ASN use their h → 0 limits: the exact expressions lose about 1e-16/|h| to
    // cancellation, the limits are off by O(|h|); 1e-8 balances the two.
    private const double SmallH = 1e-8;

    private readonly double _logErrorRatio;   // ln a, a = p1/p0 > 1: the step on an error
    private readonly double _logSuccessRatio; // ln b, b = (1 − p1)/(1 − p0) < 1: the step on a correct answer

    /// <param name="p0">Error rate under H0, in (0, 1).</param>
    /// <param name="p1">Error rate under H1, in (p0, 1).</param>
    /// <param name="alpha">Wanted probability of accepting H1 when p = p0, in (0, 1).</param>
    /// <param name="beta">Wanted probability of accepting H0 when p = p1, in (0, 1); <c>alpha + beta &lt; 1</c>.</param>
    public BernoulliSprt(double p0, double p1, double alpha, double beta)
    {
        Guard.TestRates(p0, p1, alpha, beta);
        if (!(alpha + beta < 1.0))
        {
            throw new ArgumentOutOfRangeException(nameof(beta), beta, "alpha + beta must be below 1, or the bounds cross.");
        }

        P0 = p0;
        P1 = p1;
        Alpha = alpha;
        Beta = beta;
        LogUpperBound = Math.Log((1 - beta) / alpha);
        LogLowerBound = Math.Log(beta / (1 - alpha));
        _logErrorRatio = Math.Log(p1 / p0);
        _logSuccessRatio = Precise.LogP1(-p1) - Precise.LogP1(-p0);
    }

    public double P0 { get; }

    public double P1 { get; }

    public double Alpha { get; }

    public double Beta { get; }

    /// <summary><c>ln A = ln((1 − β)/α)</c>: accept H1 when the log-likelihood ratio is at or above it.</summary>
    public double LogUpperBound { get; }

    /// <summary><c>ln B = ln(β/(1 − α))</c>: accept H0 when the log-likelihood ratio is at or below it.</summary>
    public double LogLowerBound { get; }

    /// <summary>ln of the likelihood ratio of H1 to H0 after <paramref name="errors"/> errors in <paramref name="trials"/> trials.</summary>
    public double LogLikelihoodRatio(int errors, int trials)
    {
        Guard.Count(errors, trials, nameof(errors), nameof(trials));
        return (errors * _logErrorRatio) + ((trials - errors) * _logSuccessRatio);
    }

    /// <summary>The decision after <paramref name="errors"/> errors in <paramref name="trials"/> trials (0 trials: <see cref="SprtDecision.Continue"/>).</summary>
    public SprtDecision Decide(int errors, int trials)
    {
        var llr = LogLikelihoodRatio(errors, trials);
        if (llr >= LogUpperBound)
        {
            return SprtDecision.AcceptAlternative;
        }

        return llr <= LogLowerBound ? SprtDecision.AcceptNull : SprtDecision.Continue;
    }

    /// <summary>
    /// Wald's approximation of the probability of accepting H0 when the true error rate is <paramref name="p"/>:
    /// <c>L(p) = (A^h − 1)/(A^h − B^h)</c>, where <c>h ≠ 0</c> solves <c>p·a^h + (1 − p)·b^h = 1</c>
    /// (Wald 1945, section 3.2). It equals 1 − α at p0 (h = 1), β at p1 (h = −1), and
    /// <c>ln A/(ln A − ln B)</c> where the expected step is zero (h = 0).
    /// </summary>
    /// <param name="p">True error rate in [0, 1].</param>
    public double OperatingCharacteristic(double p)
    {
        Guard.Probability(p, nameof(p));
        return OperatingCharacteristicAt(SolveH(p));
    }

    /// <summary>
    /// Wald's approximation of the expected number of trials to a decision when the true error rate is
    /// <paramref name="p"/>: <c>E[n] = (L·ln B + (1 − L)·ln A)/E[z]</c> with <c>E[z] = p·ln a + (1 − p)·ln b</c>
    /// the expected step; where the expected step is zero, <c>E[n] = −ln A·ln B / E[z²]</c> (Wald 1945, section 4).
    /// </summary>
    /// <param name="p">True error rate in [0, 1].</param>
    public double ExpectedSampleNumber(double p)
    {
        Guard.Probability(p, nameof(p));
        var h = SolveH(p);
        double lnA = LogUpperBound, lnB = LogLowerBound;
        if (Math.Abs(h) < SmallH)
        {
            var meanSquareStep = (p * _logErrorRatio * _logErrorRatio) + ((1 - p) * _logSuccessRatio * _logSuccessRatio);
            return -lnA * lnB / meanSquareStep;
        }

        var oc = OperatingCharacteristicAt(h);
        var drift = (p * _logErrorRatio) + ((1 - p) * _logSuccessRatio);
        return ((oc * lnB) + ((1 - oc) * lnA)) / drift;
    }

    /// <summary>The error rate at which the expected log-likelihood step is zero (h = 0).</summary>
    public double ZeroDriftRate => _logSuccessRatio / (_logSuccessRatio - _logErrorRatio);

    private double OperatingCharacteristicAt(double h)
    {
        if (double.IsPositiveInfinity(h))
        {
            return 1.0;
        }

        if (double.IsNegativeInfinity(h))
        {
            return 0.0;
        }

        double lnA = LogUpperBound, lnB = LogLowerBound;
        if (Math.Abs(h) < SmallH)
        {
            return lnA / (lnA - lnB);
        }

        // (A^h − 1)/(A^h − B^h), rearranged so that no power exceeds 1 (A > 1 > B > 0).
        return h > 0
            ? Precise.ExpM1(-h * lnA) / Precise.ExpM1(h * (lnB - lnA))
            : Math.Exp(-h * lnB) * Precise.ExpM1(h * lnA) / Precise.ExpM1(h * (lnA - lnB));
    }

    /// <summary>
    /// The nonzero root h of <c>p·a^h + (1 − p)·b^h = 1</c>, found by inverting Wald's parametric form
    /// <c>p(h) = (1 − b^h)/(a^h − b^h)</c>, which falls strictly from 1 (h → −∞) to 0 (h → ∞).
    /// </summary>
    private double SolveH(double p)
    {
        if (p == 0.0)
        {
            return double.PositiveInfinity;
        }

        if (p == 1.0)
        {
            return double.NegativeInfinity;
        }

        var pStar = ZeroDriftRate;
        if (p == pStar)
        {
            return 0.0;
        }

        // Expand a bracket away from 0 on the side where the root lies, then refine with Brent.
        double sign = p < pStar ? 1.0 : -1.0, near = 0.0, far = sign;
        while ((ParametricRate(far) - p) * sign > 0)
        {
            near = far;
            far *= 2;
        }

        return Brent.FindRoot(h => ParametricRate(h) - p, Math.Min(near, far), Math.Max(near, far), 1e-15, 200);
    }

    /// <summary>Wald's <c>p(h) = (1 − b^h)/(a^h − b^h)</c>, in a form that neither overflows nor cancels near 0.</summary>
    private double ParametricRate(double h)
    {
        double lnA = _logErrorRatio, lnB = _logSuccessRatio;
        if (h == 0.0)
        {
            return ZeroDriftRate;
        }

        return h > 0
            ? Math.Exp(-h * lnA) * Precise.ExpM1(h * lnB) / Precise.ExpM1(h * (lnB - lnA))
            : Precise.ExpM1(-h * lnB) / Precise.ExpM1(-h * (lnB - lnA));
    }
}
