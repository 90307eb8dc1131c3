using MathNet.Numerics;
using MathNet.Numerics.Distributions;

namespace TeachServe.Core.Statistics;

/// <summary>
/// Comparing two binomial proportions <c>p1 = x1/n1</c> and <c>p2 = x2/n2</c> (e.g. two experiment arms).
/// </summary>
/// <remarks>
/// Counts are validated (<c>0 ≤ x ≤ n</c>, cells ≥ 0; <see cref="ArgumentOutOfRangeException"/> otherwise).
/// Intervals for <c>p1 − p2</c> with an empty group (<c>n = 0</c>) are the whole range <c>[−1, 1]</c>;
/// the z test with an empty group, or with no variation at all, returns NaN statistic and p-value.
/// </remarks>
public static class TwoProportions
{
    /// <summary>
    /// Newcombe's hybrid score interval for <c>p1 − p2</c> (Newcombe, Stat Med 17:873, 1998, method 10):
    /// from the Wilson intervals <c>(l1, u1)</c>, <c>(l2, u2)</c>,
    /// <c>[d − √((p1 − l1)² + (u2 − p2)²), d + √((u1 − p1)² + (p2 − l2)²)]</c>.
    /// </summary>
    public static Interval NewcombeDifference(int x1, int n1, int x2, int n2, double confidence = 0.95)
    {
        ValidateCounts(x1, n1, x2, n2);
        Guard.Confidence(confidence);
        if (n1 == 0 || n2 == 0)
        {
            return new Interval(-1.0, 1.0);
        }

        var z = Guard.TwoSidedZ(confidence);
        var w1 = ProportionIntervals.WilsonScore(x1, n1, z);
        var w2 = ProportionIntervals.WilsonScore(x2, n2, z);
        double p1 = (double)x1 / n1, p2 = (double)x2 / n2, d = p1 - p2;
        var below = Math.Sqrt(Square(p1 - w1.Low) + Square(w2.High - p2));
        var above = Math.Sqrt(Square(w1.High - p1) + Square(p2 - w2.Low));
        return new Interval(d - below, d + above);
    }

    /// <summary>
    /// Wald interval for <c>p1 − p2</c>: <c>d ± z·√(p1(1 − p1)/n1 + p2(1 − p2)/n2)</c>, clipped to [−1, 1],
    /// without continuity correction (R's <c>prop.test(correct = FALSE)</c>). Known to undercover for small n
    /// or extreme p; prefer <see cref="NewcombeDifference"/>.
    /// </summary>
    public static Interval WaldDifference(int x1, int n1, int x2, int n2, double confidence = 0.95)
    {
        ValidateCounts(x1, n1, x2, n2);
        Guard.Confidence(confidence);
        if (n1 == 0 || n2 == 0)
        {
            return new Interval(-1.0, 1.0);
        }

        double p1 = (double)x1 / n1, p2 = (double)x2 / n2, d = p1 - p2;
        var half = Guard.TwoSidedZ(confidence) * Math.Sqrt((p1 * (1 - p1) / n1) + (p2 * (1 - p2) / n2));
        return new Interval(Math.Max(-1.0, d - half), Math.Min(1.0, d + half));
    }

    /// <summary>
    /// Two-sided two-proportion z test with the pooled proportion <c>p̄ = (x1 + x2)/(n1 + n2)</c>:
    /// <c>z = (p1 − p2)/√(p̄(1 − p̄)(1/n1 + 1/n2))</c>, p = 2Φ(−|z|). Its z² equals the Pearson χ² of the
    /// 2×2 table without continuity correction. <see cref="TestResult.DegreesOfFreedom"/> is NaN.
    /// NaN statistic and p-value when a group is empty or <c>p̄</c> is 0 or 1.
    /// </summary>
    public static TestResult PooledZTest(int x1, int n1, int x2, int n2)
    {
        ValidateCounts(x1, n1, x2, n2);
        if (n1 == 0 || n2 == 0 || x1 + x2 == 0 || x1 + x2 == n1 + n2)
        {
            return new TestResult(double.NaN, double.NaN, double.NaN);
        }

        double p1 = (double)x1 / n1, p2 = (double)x2 / n2;
        var pooled = (double)(x1 + x2) / (n1 + n2);
        var z = (p1 - p2) / Math.Sqrt(pooled * (1 - pooled) * ((1.0 / n1) + (1.0 / n2)));
        return new TestResult(z, double.NaN, 2 * Normal.CDF(0.0, 1.0, -Math.Abs(z)));
    }

    /// <summary>
    /// Fisher's exact test on the 2×2 table <c>[[a, b], [c, d]]</c>, one-sided for odds ratio &gt; 1:
    /// <c>P(X ≥ a)</c> with X hypergeometric given the margins (Fisher 1935; Agresti,
    /// Categorical Data Analysis, 2002, section 3.5). An all-zero table gives 1.
    /// </summary>
    public static double FisherExactGreater(int a, int b, int c, int d)
    {
        var table = new FisherTable(a, b, c, d);
        var sum = 0.0;
        for (var k = a; k <= table.Max; k++)
        {
            sum += table.Probability(k);
        }

        return Math.Min(1.0, sum);
    }

    /// <summary>
    /// Two-sided Fisher exact test on <c>[[a, b], [c, d]]</c>: the total probability of the tables with the
    /// same margins that are no more likely than the observed one, with R's relative tolerance of 1e-7 on
    /// "no more likely" (R <c>fisher.test</c>). An all-zero table gives 1.
    /// </summary>
    public static double FisherExactTwoSided(int a, int b, int c, int d)
    {
        var table = new FisherTable(a, b, c, d);
        var threshold = table.Probability(a) * (1 + 1e-7);
        var sum = 0.0;
        for (var k = table.Min; k <= table.Max; k++)
        {
            var p = table.Probability(k);
            if (p <= threshold)
            {
                sum += p;
            }
        }

        return Math.Min(1.0, sum);
    }

    private static void ValidateCounts(int x1, int n1, int x2, int n2)
    {
        Guard.Count(x1, n1, nameof(x1), nameof(n1));
        Guard.Count(x2, n2, nameof(x2), nameof(n2));
    }

    private static double Square(double x) => x * x;

    /// <summary>
    /// The hypergeometric law of the top-left cell given the margins. The mass is taken in log space from
    /// <see cref="SpecialFunctions.BinomialLn"/>: <see cref="Hypergeometric.PMF"/> goes through rounded binomial
    /// coefficients that overflow once the table holds about a thousand items.
    /// </summary>
    private readonly struct FisherTable
    {
        private readonly int _population, _success, _draws;
        private readonly double _logDenominator;

        public FisherTable(int a, int b, int c, int d)
        {
            Guard.NonNegative(a, nameof(a));
            Guard.NonNegative(b, nameof(b));
            Guard.NonNegative(c, nameof(c));
            Guard.NonNegative(d, nameof(d));
            _population = checked(a + b + c + d);
            _success = a + c;   // first column total
            _draws = a + b;     // first row total
            Min = Math.Max(0, _draws + _success - _population);
            Max = Math.Min(_success, _draws);
            _logDenominator = SpecialFunctions.BinomialLn(_population, _draws);
        }

        public int Min { get; }

        public int Max { get; }

        public double Probability(int k) => Math.Exp(
            SpecialFunctions.BinomialLn(_success, k) + SpecialFunctions.BinomialLn(_population - _success, _draws - k) - _logDenominator);
    }
}
