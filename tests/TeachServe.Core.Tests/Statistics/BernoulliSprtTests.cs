using TeachServe.Core.Statistics;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Statistics;

/// <summary>
/// Wald's SPRT (REFERENCES.md section A, last row) checked against Wald's closed forms and against exact
/// path probabilities of the test, computed here with the test's own boundaries.
/// </summary>
public class BernoulliSprtTests
{
    private const string Wald = "Wald, \"Sequential tests of statistical hypotheses\", Ann. Math. Stat. 16, 1945 [pub]";

    public static TheoryData<double, double, double, double> Designs => new()
    {
        { 0.1, 0.3, 0.05, 0.05 },
        { 0.05, 0.15, 0.05, 0.10 },
        { 0.2, 0.3, 0.10, 0.10 },
        { 0.01, 0.05, 0.01, 0.20 },
    };

    [Theory]
    [MemberData(nameof(Designs))]
    public void Bounds_are_Walds_A_and_B(double p0, double p1, double alpha, double beta)
    {
        // Wald SPRT boundaries A = (1−β)/α, B = β/(1−α) on the likelihood ratio — Wald 1945 [pub]
        var sprt = new BernoulliSprt(p0, p1, alpha, beta);
        double a = (1 - beta) / alpha, b = beta / (1 - alpha);
        AssertNear.Relative(a, Math.Exp(sprt.LogUpperBound), 1e-14, Wald);
        AssertNear.Relative(b, Math.Exp(sprt.LogLowerBound), 1e-14, Wald);
        Assert.Equal((p0, p1, alpha, beta), (sprt.P0, sprt.P1, sprt.Alpha, sprt.Beta));
    }

    [Theory]
    [MemberData(nameof(Designs))]
    public void Decisions_follow_the_likelihood_ratio_of_the_counts(double p0, double p1, double alpha, double beta)
    {
        var sprt = new BernoulliSprt(p0, p1, alpha, beta);
        double upper = Math.Log((1 - beta) / alpha), lower = Math.Log(beta / (1 - alpha));
        for (var n = 0; n <= 150; n++)
        {
            for (var e = 0; e <= n; e++)
            {
                // The likelihood ratio written as a ratio of the two binomial likelihoods (the binomial coefficient cancels).
                var llr = Math.Log(Math.Pow(p1, e) * Math.Pow(1 - p1, n - e) / (Math.Pow(p0, e) * Math.Pow(1 - p0, n - e)));
                AssertNear.Absolute(llr, sprt.LogLikelihoodRatio(e, n), 1e-9 * (1 + Math.Abs(llr)), $"LLR({e}, {n})");
                Assert.Equal(Rule(llr, upper, lower), sprt.Decide(e, n));
            }
        }
    }

    [Theory]
    [MemberData(nameof(Designs))]
    public void Operating_characteristic_is_one_minus_alpha_at_p0_and_beta_at_p1(double p0, double p1, double alpha, double beta)
    {
        // Wald 1945 [pub]: L(p) = (A^h − 1)/(A^h − B^h); h = 1 at p0 and h = −1 at p1, which give exactly 1 − α and β.
        var sprt = new BernoulliSprt(p0, p1, alpha, beta);
        AssertNear.Absolute(1 - alpha, sprt.OperatingCharacteristic(p0), 1e-9, "L(p0)");
        AssertNear.Absolute(beta, sprt.OperatingCharacteristic(p1), 1e-9, "L(p1)");
        Assert.Equal(1.0, sprt.OperatingCharacteristic(0.0));
        Assert.Equal(0.0, sprt.OperatingCharacteristic(1.0));
    }

    [Theory]
    [InlineData(-3.0)]
    [InlineData(-1.5)]
    [InlineData(-0.2)]
    [InlineData(0.01)]
    [InlineData(0.7)]
    [InlineData(2.0)]
    [InlineData(6.0)]
    public void Operating_characteristic_and_expected_sample_number_follow_Walds_parametric_form(double h)
    {
        // Wald 1945 [pub]: for each h ≠ 0, p(h) = (1 − b^h)/(a^h − b^h) has L = (A^h − 1)/(A^h − B^h) and
        // E[n] = (L·ln B + (1 − L)·ln A)/(p·ln a + (1 − p)·ln b). Evaluated here directly at h, so the class's
        // root finding (p → h) is what is checked.
        const double p0 = 0.1, p1 = 0.3, alpha = 0.05, beta = 0.1;
        var sprt = new BernoulliSprt(p0, p1, alpha, beta);
        double a = p1 / p0, b = (1 - p1) / (1 - p0), bigA = (1 - beta) / alpha, bigB = beta / (1 - alpha);
        var p = (1 - Math.Pow(b, h)) / (Math.Pow(a, h) - Math.Pow(b, h));
        var oc = (Math.Pow(bigA, h) - 1) / (Math.Pow(bigA, h) - Math.Pow(bigB, h));
        var asn = ((oc * Math.Log(bigB)) + ((1 - oc) * Math.Log(bigA))) / ((p * Math.Log(a)) + ((1 - p) * Math.Log(b)));
        AssertNear.Absolute(oc, sprt.OperatingCharacteristic(p), 1e-9, $"L at h = {h}");
        AssertNear.Relative(asn, sprt.ExpectedSampleNumber(p), 1e-7, $"E[n] at h = {h}");
    }

    [Fact]
    public void Zero_drift_point_uses_the_limits()
    {
        // Wald 1945 [pub]: where E[z] = 0 (h = 0), L = ln A/(ln A − ln B) and E[n] = −ln A·ln B/E[z²].
        const double p0 = 0.1, p1 = 0.3, alpha = 0.05, beta = 0.1;
        var sprt = new BernoulliSprt(p0, p1, alpha, beta);
        double lnA = Math.Log((1 - beta) / alpha), lnB = Math.Log(beta / (1 - alpha));
        double za = Math.Log(p1 / p0), zb = Math.Log((1 - p1) / (1 - p0));
        var pStar = -zb / (za - zb);
        var meanSquare = (pStar * za * za) + ((1 - pStar) * zb * zb);
        AssertNear.Absolute(lnA / (lnA - lnB), sprt.OperatingCharacteristic(pStar), 1e-9, "L(p*)");
        AssertNear.Relative(-lnA * lnB / meanSquare, sprt.ExpectedSampleNumber(pStar), 1e-8, "E[n](p*)");
        // Continuous across p*: no spike or NaN from 0/0 just beside it.
        foreach (var offset in new[] { -1e-6, -1e-9, -1e-12, 1e-12, 1e-9, 1e-6 })
        {
            AssertNear.Absolute(lnA / (lnA - lnB), sprt.OperatingCharacteristic(pStar + offset), 1e-5, $"L(p* + {offset})");
            AssertNear.Relative(-lnA * lnB / meanSquare, sprt.ExpectedSampleNumber(pStar + offset), 1e-5, $"E[n](p* + {offset})");
        }
    }

    [Theory]
    [MemberData(nameof(Designs))]
    public void Exact_error_rates_meet_Walds_inequalities_and_the_approximation(double p0, double p1, double alpha, double beta)
    {
        var sprt = new BernoulliSprt(p0, p1, alpha, beta);
        var exactAtP0 = ExactRun(p0, p1, alpha, beta, p0, 4000);
        var exactAtP1 = ExactRun(p0, p1, alpha, beta, p1, 4000);
        Assert.True(exactAtP0.Undecided < 1e-12 && exactAtP1.Undecided < 1e-12, "truncation must not matter");
        double alphaAchieved = 1 - exactAtP0.AcceptNull, betaAchieved = exactAtP1.AcceptNull;
        // Wald 1945 [pub]: α′ ≤ α/(1 − β), β′ ≤ β/(1 − α), α′ + β′ ≤ α + β.
        Assert.True(alphaAchieved <= alpha / (1 - beta), $"α′ = {alphaAchieved}");
        Assert.True(betaAchieved <= beta / (1 - alpha), $"β′ = {betaAchieved}");
        Assert.True(alphaAchieved + betaAchieved <= alpha + beta, $"α′ + β′ = {alphaAchieved + betaAchieved}");

        // Wald's OC and ASN ignore the overshoot of the last step over a bound. For these designs that costs at
        // most 0.03 in L; E[n] is underestimated, by at most 20 % (exact values computed alongside).
        foreach (var p in new[] { p0 / 2, p0, sprt.ZeroDriftRate, p1, (p1 + 1) / 2 })
        {
            var exact = ExactRun(p0, p1, alpha, beta, p, 4000);
            AssertNear.Absolute(exact.AcceptNull, sprt.OperatingCharacteristic(p), 0.03, $"L({p})");
            Assert.InRange(sprt.ExpectedSampleNumber(p), 0.8 * exact.ExpectedTrials, exact.ExpectedTrials);
        }
    }

    [Fact]
    public void Path_probabilities_agree_with_enumerating_every_answer_sequence()
    {
        // Validates ExactRun itself: all 2^16 error/correct sequences, each stopped at its first decision.
        const double p0 = 0.1, p1 = 0.3, alpha = 0.05, beta = 0.05, p = 0.2;
        const int length = 16;
        double upper = Math.Log((1 - beta) / alpha), lower = Math.Log(beta / (1 - alpha));
        double za = Math.Log(p1 / p0), zb = Math.Log((1 - p1) / (1 - p0));
        double acceptNull = 0, acceptAlternative = 0;
        for (var mask = 0; mask < 1 << length; mask++)
        {
            var weight = Math.Pow(p, BitOps(mask)) * Math.Pow(1 - p, length - BitOps(mask));
            var llr = 0.0;
            for (var t = 0; t < length; t++)
            {
                llr += ((mask >> t) & 1) == 1 ? za : zb;
                var decision = Rule(llr, upper, lower);
                if (decision == SprtDecision.AcceptNull)
                {
                    acceptNull += weight;
                    break;
                }

                if (decision == SprtDecision.AcceptAlternative)
                {
                    acceptAlternative += weight;
                    break;
                }
            }
        }

        var run = ExactRun(p0, p1, alpha, beta, p, length);
        AssertNear.Absolute(acceptNull, run.AcceptNull, 1e-12, "accept H0 by 16");
        AssertNear.Absolute(acceptAlternative, 1 - run.AcceptNull - run.Undecided, 1e-12, "accept H1 by 16");
    }

    [Fact]
    public void Invalid_designs_throw()
    {
        Assert.Throws<ArgumentOutOfRangeException>(() => new BernoulliSprt(0.3, 0.1, 0.05, 0.05));
        Assert.Throws<ArgumentOutOfRangeException>(() => new BernoulliSprt(0.1, 0.1, 0.05, 0.05));
        Assert.Throws<ArgumentOutOfRangeException>(() => new BernoulliSprt(0.0, 0.1, 0.05, 0.05));
        Assert.Throws<ArgumentOutOfRangeException>(() => new BernoulliSprt(0.1, 1.0, 0.05, 0.05));
        Assert.Throws<ArgumentOutOfRangeException>(() => new BernoulliSprt(0.1, 0.3, 0.0, 0.05));
        Assert.Throws<ArgumentOutOfRangeException>(() => new BernoulliSprt(0.1, 0.3, 0.6, 0.5));
        Assert.Throws<ArgumentOutOfRangeException>(() => new BernoulliSprt(0.1, 0.3, double.NaN, 0.05));
        var sprt = new BernoulliSprt(0.1, 0.3, 0.05, 0.05);
        Assert.Throws<ArgumentOutOfRangeException>(() => sprt.Decide(3, 2));
        Assert.Throws<ArgumentOutOfRangeException>(() => sprt.OperatingCharacteristic(1.5));
        Assert.Throws<ArgumentOutOfRangeException>(() => sprt.ExpectedSampleNumber(double.NaN));
    }

    private static SprtDecision Rule(double llr, double upper, double lower) =>
        llr >= upper ? SprtDecision.AcceptAlternative : llr <= lower ? SprtDecision.AcceptNull : SprtDecision.Continue;

    private static int BitOps(int mask) => System.Numerics.BitOperations.PopCount((uint)mask);

    /// <summary>
    /// Exact probabilities of the SPRT truncated at <paramref name="maxTrials"/>, by propagating the mass of the
    /// undecided (trials, errors) states; the stopping rule is rebuilt here from A and B, not taken from the class.
    /// </summary>
    private static (double AcceptNull, double Undecided, double ExpectedTrials) ExactRun(
        double p0, double p1, double alpha, double beta, double p, int maxTrials)
    {
        double upper = Math.Log((1 - beta) / alpha), lower = Math.Log(beta / (1 - alpha));
        double za = Math.Log(p1 / p0), zb = Math.Log((1 - p1) / (1 - p0));
        // The undecided states at each n form a narrow band of error counts [lo, hi]; only it is visited.
        var mass = new double[maxTrials + 2];
        var next = new double[maxTrials + 2];
        mass[0] = 1;
        int lo = 0, hi = 0;
        double acceptNull = 0, expected = 0;
        for (var n = 1; n <= maxTrials && lo <= hi; n++)
        {
            for (var e = lo; e <= hi; e++)
            {
                next[e + 1] += mass[e] * p;
                next[e] += mass[e] * (1 - p);
            }

            int newLo = int.MaxValue, newHi = -1;
            for (var e = lo; e <= hi + 1; e++)
            {
                var decision = Rule((e * za) + ((n - e) * zb), upper, lower);
                if (decision != SprtDecision.Continue)
                {
                    expected += n * next[e];
                    if (decision == SprtDecision.AcceptNull)
                    {
                        acceptNull += next[e];
                    }

                    next[e] = 0;
                }
                else if (next[e] != 0)
                {
                    newLo = Math.Min(newLo, e);
                    newHi = e;
                }
            }

            (mass, next) = (next, mass);
            Array.Clear(next);
            (lo, hi) = (newLo, newHi);
        }

        return (acceptNull, lo <= hi ? mass.Sum() : 0.0, expected);
    }
}
