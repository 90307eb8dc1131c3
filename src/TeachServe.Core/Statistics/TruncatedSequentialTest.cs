using System.Collections.Concurrent;
using MathNet.Numerics.Distributions;

namespace TeachServe.Core.Statistics;

/// <summary>
/// A truncated sequential test of a Bernoulli error rate, H0: p ≤ p0 against H1: p ≥ p1, with at most
/// <see cref="MaxItems"/> trials, whose error rates are computed exactly rather than approximated.
/// After n trials with e errors it releases (accepts H0) when e ≤ <see cref="ReleaseAtMost"/>[n], fails (accepts
/// H1) when e ≥ <see cref="FailAtLeast"/>[n], and otherwise continues; at n = MaxItems it always decides.
/// </summary>
/// <remarks>
/// <para>The continuation region is Wald's: two parallel lines in the (n, e) plane with Wald's slope
/// s = ln((1−p0)/(1−p1)) / (ln(p1/p0) + ln((1−p0)/(1−p1))) (Wald, "Sequential Analysis", 1947, ch. 5), cut at
/// the maximum length. Wald's intercepts ln A, ln B only approximate the error rates, and truncation breaks even
/// that (the reason the gate's former rule released only 58 % of annotators exactly at target); here the two
/// intercepts and the decision at truncation are chosen by exact path counting instead, in the manner of the
/// truncated designs of Armitage ("Restricted sequential procedures", Biometrika 44, 1957) and Anderson
/// ("A modification of the sequential probability ratio test to reduce the sample size", Ann. Math. Stat. 31,
/// 1960): dynamic programming over the number of errors gives, for any p, the probability of each decision and
/// the expected number of trials, with no approximation. Among the designs on a grid of intercepts that meet
/// P(fail | p0) ≤ alpha and P(release | p1) ≤ beta, the one with the smallest mean of the expected trials at p0
/// and p1 is kept.</para>
/// <para>The fixed-length test (release when e ≤ c after exactly MaxItems trials) is one of the designs, and by
/// the Neyman–Pearson lemma no test that stops by MaxItems has both error rates below the best fixed-length
/// test's (randomisation aside). So when no design fits, <see cref="TryDesign"/> reports that fixed test's best
/// pair and the shortest maximum length that would fit.</para>
/// <para>The release region is a lower set in e at every n, so the release probability falls as p rises: the
/// guarantees at p0 and p1 hold for every p ≤ p0 and every p ≥ p1.</para>
/// </remarks>
public sealed class TruncatedSequentialTest
{
    /// <summary>Intercepts are searched in steps of at least this many errors…</summary>
    private const double FinestStep = 0.1;

    /// <summary>…and on at most this many points each, so a long test's search stays within ~10^8 operations.</summary>
    private const int ReleaseGridPoints = 40;
    private const int FailGridPoints = 60;

    /// <summary>The longest maximum length <see cref="TryDesign"/> looks at when it suggests one.</summary>
    public const int LongestSuggestion = 2000;

    private static readonly ConcurrentDictionary<(double, double, double, double, int, bool), DesignResult> Cache = new();

    private TruncatedSequentialTest(double p0, double p1, double alpha, double beta, int[] releaseAtMost, int[] failAtLeast)
    {
        P0 = p0;
        P1 = p1;
        Alpha = alpha;
        Beta = beta;
        MaxItems = releaseAtMost.Length - 1;
        ReleaseAtMost = releaseAtMost;
        FailAtLeast = failAtLeast;
        AchievedAlpha = 1.0 - ReleaseProbability(p0);
        AchievedBeta = ReleaseProbability(p1);
    }

    public double P0 { get; }

    public double P1 { get; }

    /// <summary>The wanted bound on P(fail | p = p0).</summary>
    public double Alpha { get; }

    /// <summary>The wanted bound on P(release | p = p1).</summary>
    public double Beta { get; }

    public int MaxItems { get; }

    /// <summary>Index n = trials so far (0..MaxItems): release when errors ≤ this; −1 = no release at n.</summary>
    public IReadOnlyList<int> ReleaseAtMost { get; }

    /// <summary>Index n: fail when errors ≥ this; n + 1 = no failure at n. At MaxItems it is ReleaseAtMost + 1.</summary>
    public IReadOnlyList<int> FailAtLeast { get; }

    /// <summary>The exact P(fail | p0), ≤ <see cref="Alpha"/>.</summary>
    public double AchievedAlpha { get; }

    /// <summary>The exact P(release | p1), ≤ <see cref="Beta"/>.</summary>
    public double AchievedBeta { get; }

    /// <summary>Whether this is the fixed-length test (no decision before MaxItems).</summary>
    public bool IsFixedLength
    {
        get
        {
            for (var n = 1; n < MaxItems; n++)
            {
                if (ReleaseAtMost[n] >= 0 || FailAtLeast[n] <= n)
                {
                    return false;
                }
            }

            return true;
        }
    }

    /// <summary>The decision after <paramref name="errors"/> errors in <paramref name="trials"/> trials.</summary>
    public SprtDecision Decide(int errors, int trials)
    {
        Guard.Count(errors, trials, nameof(errors), nameof(trials));
        if (trials > MaxItems)
        {
            throw new ArgumentOutOfRangeException(nameof(trials), trials, $"The test stops by {MaxItems} trials.");
        }

        if (errors <= ReleaseAtMost[trials])
        {
            return SprtDecision.AcceptNull;
        }

        return errors >= FailAtLeast[trials] ? SprtDecision.AcceptAlternative : SprtDecision.Continue;
    }

    /// <summary>The exact probability that the test releases when every trial errs independently with probability <paramref name="p"/>.</summary>
    public double ReleaseProbability(double p) => Evaluate(p).Release;

    /// <summary>The exact expected number of trials when every trial errs with probability <paramref name="p"/>.</summary>
    public double ExpectedItems(double p) => Evaluate(p).ExpectedItems;

    /// <summary>Release probability and expected trials at <paramref name="p"/>, by one pass of path counting.</summary>
    public (double Release, double ExpectedItems) Evaluate(double p)
    {
        Guard.Probability(p, nameof(p));
        var mass = new double[MaxItems + 2];
        var next = new double[MaxItems + 2];
        mass[0] = 1.0;
        double release = 0, expected = 0;
        for (var n = 1; n <= MaxItems; n++)
        {
            Array.Clear(next);
            for (var e = 0; e < n; e++)
            {
                var m = mass[e];
                if (m == 0)
                {
                    continue;
                }

                next[e] += m * (1 - p);
                next[e + 1] += m * p;
            }

            for (var e = 0; e <= n; e++)
            {
                var m = next[e];
                if (m == 0)
                {
                    continue;
                }

                if (e <= ReleaseAtMost[n])
                {
                    release += m;
                    expected += m * n;
                    next[e] = 0;
                }
                else if (e >= FailAtLeast[n])
                {
                    expected += m * n;
                    next[e] = 0;
                }
            }

            (mass, next) = (next, mass);
        }

        return (release, expected);
    }

    /// <summary>The closest fixed-length test named by a shortfall (its rates are the shortfall's, not the wanted ones).</summary>
    public static TruncatedSequentialTest Closest(TestShortfall shortfall)
    {
        ArgumentNullException.ThrowIfNull(shortfall);
        var n = shortfall.MaxItems;
        var release = Enumerable.Repeat(-1, n + 1).ToArray();
        var fail = Enumerable.Range(1, n + 1).ToArray();
        release[n] = shortfall.BestReleaseAtMost;
        fail[n] = shortfall.BestReleaseAtMost + 1;
        return new TruncatedSequentialTest(shortfall.P0, shortfall.P1, shortfall.Alpha, shortfall.Beta, release, fail);
    }

    /// <summary>The design for these settings; throws with the best achievable pair when none fits.</summary>
    public static TruncatedSequentialTest Design(double p0, double p1, double alpha, double beta, int maxItems, bool fixedLength = false)
    {
        if (TryDesign(p0, p1, alpha, beta, maxItems, out var test, out var shortfall, fixedLength))
        {
            return test;
        }

        throw new ArgumentException(shortfall.ToString(), nameof(maxItems));
    }

    /// <summary>
    /// Finds the design with the smallest mean expected length at p0 and p1 that meets both error rates exactly;
    /// <paramref name="fixedLength"/> keeps only the fixed-length test. Designs are cached per argument set.
    /// </summary>
    public static bool TryDesign(double p0, double p1, double alpha, double beta, int maxItems, out TruncatedSequentialTest test, out TestShortfall shortfall, bool fixedLength = false)
    {
        Guard.TestRates(p0, p1, alpha, beta);
        if (maxItems < 1 || maxItems > LongestSuggestion)
        {
            throw new ArgumentOutOfRangeException(nameof(maxItems), maxItems, $"Must be in [1, {LongestSuggestion}].");
        }

        var result = Cache.GetOrAdd((p0, p1, alpha, beta, maxItems, fixedLength), key => Search(key.Item1, key.Item2, key.Item3, key.Item4, key.Item5, key.Item6));
        test = result.Test!;
        shortfall = result.Shortfall!;
        return result.Test is not null;
    }

    private sealed record DesignResult(TruncatedSequentialTest? Test, TestShortfall? Shortfall);

    private static DesignResult Search(double p0, double p1, double alpha, double beta, int maxItems, bool fixedLength)
    {
        // Binomial counts are discrete, so a length that fits can be followed by one that does not (the fixed
        // test's rates jump with n): "at most maxItems" takes the longest length up to it that fits.
        var n = maxItems;
        var fixedTest = BestFixed(p0, p1, alpha, beta, n);
        while (n > 1 && (fixedTest.Alpha > alpha || fixedTest.Beta > beta))
        {
            fixedTest = BestFixed(p0, p1, alpha, beta, --n);
        }

        if (fixedTest.Alpha > alpha || fixedTest.Beta > beta)
        {
            var closest = BestFixed(p0, p1, alpha, beta, maxItems);
            return new DesignResult(null, new TestShortfall(p0, p1, alpha, beta, maxItems, closest.Alpha, closest.Beta, closest.ReleaseAtMost, ShortestFixedLength(p0, p1, alpha, beta, maxItems)));
        }

        var slope = WaldSlope(p0, p1);
        var noRelease = Enumerable.Repeat(-1, n + 1).ToArray();
        var noFail = Enumerable.Range(1, n + 1).ToArray();
        (int[] Release, int[] Fail, double Cost) best = (noRelease, noFail, double.PositiveInfinity);
        {
            var release = (int[])noRelease.Clone();
            var fail = (int[])noFail.Clone();
            release[n] = fixedTest.ReleaseAtMost;
            fail[n] = fixedTest.ReleaseAtMost + 1;
            best = (release, fail, n);
        }

        if (!fixedLength)
        {
            // Intercepts from 0 up to where a line no longer reaches any count before n (the fixed test's side).
            var releaseRange = (slope * n) + 1;
            var failRange = n - (slope * n) + 1;
            var releaseStep = Math.Max(FinestStep, releaseRange / ReleaseGridPoints);
            var failStep = Math.Max(FinestStep, failRange / FailGridPoints);
            var releaseSteps = (int)Math.Ceiling(releaseRange / releaseStep);
            var failSteps = (int)Math.Ceiling(failRange / failStep);
            var release = new int[n + 1];
            var fail = new int[n + 1];
            var left0 = new double[n + 1];
            var left1 = new double[n + 1];
            for (var i = 0; i <= releaseSteps; i++)
            {
                var a = i * releaseStep;
                for (var j = 1; j <= failSteps; j++)
                {
                    var b = j * failStep;
                    for (var k = 1; k < n; k++)
                    {
                        release[k] = (int)Math.Floor((slope * k) - a);
                        fail[k] = Math.Max(release[k] + 1, (int)Math.Ceiling((slope * k) + b));
                    }

                    release[0] = -1;
                    fail[0] = 1;
                    var at0 = Walk(release, fail, n, p0, left0);
                    var at1 = Walk(release, fail, n, p1, left1);
                    var cost = (at0.Expected + at1.Expected) / 2;
                    if (cost >= best.Cost || at0.Fail > alpha || at1.Release > beta)
                    {
                        continue;
                    }

                    // The decision at n among the paths still open: release when e ≤ c, the c that keeps both rates
                    // within bounds with the most room (smallest larger ratio to its bound).
                    var chosen = -2;
                    var room = double.PositiveInfinity;
                    double failAbove = left0.Sum(), releaseBelow = 0;
                    for (var c = -1; c <= n; c++)
                    {
                        if (c >= 0)
                        {
                            failAbove -= left0[c];
                            releaseBelow += left1[c];
                        }

                        var alphaC = at0.Fail + failAbove;
                        var betaC = at1.Release + releaseBelow;
                        if (alphaC <= alpha && betaC <= beta)
                        {
                            var ratio = Math.Max(alphaC / alpha, betaC / beta);
                            if (ratio < room)
                            {
                                room = ratio;
                                chosen = c;
                            }
                        }
                    }

                    if (chosen == -2)
                    {
                        continue;
                    }

                    release[n] = chosen;
                    fail[n] = chosen + 1;
                    best = ((int[])release.Clone(), (int[])fail.Clone(), cost);
                }
            }
        }

        return new DesignResult(new TruncatedSequentialTest(p0, p1, alpha, beta, best.Release, best.Fail), null);
    }

    /// <summary>
    /// Exact decision probabilities up to n − 1 trials (n itself left open); <paramref name="left"/> receives the
    /// probability of each error count among the paths still open after n trials.
    /// </summary>
    private static (double Release, double Fail, double Expected) Walk(int[] release, int[] fail, int n, double p, double[] left)
    {
        Array.Clear(left);
        Span<double> mass = stackalloc double[n + 2];
        Span<double> next = stackalloc double[n + 2];
        mass.Clear();
        mass[0] = 1.0;
        double released = 0, failed = 0, expected = 0;
        for (var k = 1; k <= n; k++)
        {
            next.Clear();
            for (var e = 0; e < k; e++)
            {
                var m = mass[e];
                next[e] += m * (1 - p);
                next[e + 1] += m * p;
            }

            if (k == n)
            {
                for (var e = 0; e <= n; e++)
                {
                    left[e] = next[e];
                    expected += next[e] * n;
                }

                break;
            }

            for (var e = 0; e <= k; e++)
            {
                var m = next[e];
                if (e <= release[k])
                {
                    released += m;
                    expected += m * k;
                    next[e] = 0;
                }
                else if (e >= fail[k])
                {
                    failed += m;
                    expected += m * k;
                    next[e] = 0;
                }
            }

            var swap = mass;
            mass = next;
            next = swap;
        }

        return (released, failed, expected);
    }

    /// <summary>Wald's slope of the boundary lines, in errors per trial (Wald 1947, ch. 5).</summary>
    public static double WaldSlope(double p0, double p1)
    {
        var g1 = Math.Log(p1 / p0);
        var g2 = Math.Log((1 - p0) / (1 - p1));
        return g2 / (g1 + g2);
    }

    /// <summary>The fixed test of <paramref name="n"/> trials whose larger ratio of error rate to bound is smallest.</summary>
    private static (int ReleaseAtMost, double Alpha, double Beta) BestFixed(double p0, double p1, double alpha, double beta, int n)
    {
        (int C, double Alpha, double Beta, double Ratio) best = (-1, 1.0, 0.0, double.PositiveInfinity);
        for (var c = -1; c <= n; c++)
        {
            var a = c < 0 ? 1.0 : 1.0 - Binomial.CDF(p0, n, c);
            var b = c < 0 ? 0.0 : Binomial.CDF(p1, n, c);
            var ratio = Math.Max(a / alpha, b / beta);
            if (ratio < best.Ratio)
            {
                best = (c, a, b, ratio);
            }
        }

        return (best.C, best.Alpha, best.Beta);
    }

    /// <summary>The shortest fixed length that meets both rates (null above <see cref="LongestSuggestion"/>); none up to <paramref name="from"/> does.</summary>
    private static int? ShortestFixedLength(double p0, double p1, double alpha, double beta, int from)
    {
        for (var n = from + 1; n <= LongestSuggestion; n++)
        {
            var f = BestFixed(p0, p1, alpha, beta, n);
            if (f.Alpha <= alpha && f.Beta <= beta)
            {
                return n;
            }
        }

        return null;
    }
}

/// <summary>Why no test of <see cref="MaxItems"/> trials meets both error rates, and what comes closest.</summary>
/// <param name="BestAlpha">P(fail | p0) of the closest fixed-length test.</param>
/// <param name="BestBeta">P(release | p1) of the closest fixed-length test.</param>
/// <param name="BestReleaseAtMost">That test releases with at most this many errors.</param>
/// <param name="ShortestMaxItems">The smallest maximum length with a test that fits; null when none up to the search limit.</param>
public sealed record TestShortfall(double P0, double P1, double Alpha, double Beta, int MaxItems, double BestAlpha, double BestBeta, int BestReleaseAtMost, int? ShortestMaxItems)
{
    public override string ToString() =>
        FormattableString.Invariant($"No test of at most {MaxItems} items keeps P(fail | answer error {P0:0.####}) ≤ {Alpha:0.####} and P(release | answer error {P1:0.####}) ≤ {Beta:0.####}; the closest reaches {BestAlpha:0.####} and {BestBeta:0.####} (release with at most {BestReleaseAtMost} wrong of {MaxItems}).")
        + (ShortestMaxItems is { } shortest ? FormattableString.Invariant($" At least {shortest} items are needed, or a wider delta or larger alpha/beta.") : " Widen delta or raise alpha/beta.");
}
