using MathNet.Numerics.Distributions;
using TeachServe.Core.Statistics;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Statistics;

/// <summary>
/// The exact truncated sequential test: its path-counting operating characteristic against brute-force enumeration
/// of every answer sequence and against seeded simulation, its fixed-length member against MathNet's binomial
/// distribution, and the designs against their promised error rates.
/// </summary>
public class TruncatedSequentialTestTests
{
    private const string Wald1947 = "Wald, \"Sequential Analysis\", 1947, ch. 5 (slope of the boundary lines) [pub]";

    public static TheoryData<double, double, double, double, int> Designs => new()
    {
        { 0.1, 0.3, 0.05, 0.10, 12 },
        { 0.12, 0.31, 0.10, 0.05, 14 },
        { 0.2, 0.5, 0.10, 0.10, 10 },
        { 0.05, 0.3, 0.05, 0.05, 13 },
    };

    [Theory]
    [MemberData(nameof(Designs))]
    public void Path_counting_equals_enumeration_of_every_answer_sequence(double p0, double p1, double alpha, double beta, int n)
    {
        // Independent reference: walk each of the 2^n sequences through Decide and add its probability.
        if (!TruncatedSequentialTest.TryDesign(p0, p1, alpha, beta, n, out var test, out _))
        {
            test = LooseDesign(p0, p1, n);
        }

        foreach (var p in new[] { 0.0, 0.03, p0, (p0 + p1) / 2, p1, 0.7, 1.0 })
        {
            double release = 0, items = 0;
            for (var bits = 0; bits < 1 << n; bits++)
            {
                int errors = 0, trials = 0;
                var probability = 1.0;
                var decision = SprtDecision.Continue;
                while (decision == SprtDecision.Continue)
                {
                    var wrong = ((bits >> trials) & 1) == 1;
                    trials++;
                    errors += wrong ? 1 : 0;
                    probability *= wrong ? p : 1 - p;
                    decision = test.Decide(errors, trials);
                }

                // A path that stopped after k trials is met once per value of the unused bits: count it only for
                // the value with all of them zero.
                if ((bits >> trials) != 0)
                {
                    continue;
                }

                items += probability * trials;
                release += decision == SprtDecision.AcceptNull ? probability : 0;
            }

            var (exactRelease, exactItems) = test.Evaluate(p);
            AssertNear.Absolute(release, exactRelease, 1e-12, $"release probability at p = {p}");
            AssertNear.Absolute(items, exactItems, 1e-10, $"expected items at p = {p}");
        }
    }

    [Theory]
    [MemberData(nameof(Designs))]
    public void Seeded_simulation_agrees_with_the_exact_rates(double p0, double p1, double alpha, double beta, int n)
    {
        if (!TruncatedSequentialTest.TryDesign(p0, p1, alpha, beta, n, out var test, out _))
        {
            test = LooseDesign(p0, p1, n);
        }

        var random = new SeededRandom(2026);
        foreach (var p in new[] { p0, p1 })
        {
            const int runs = 20_000;
            var released = 0;
            for (var r = 0; r < runs; r++)
            {
                int errors = 0, trials = 0;
                var decision = SprtDecision.Continue;
                while (decision == SprtDecision.Continue)
                {
                    trials++;
                    errors += random.NextDouble() < p ? 1 : 0;
                    decision = test.Decide(errors, trials);
                }

                released += decision == SprtDecision.AcceptNull ? 1 : 0;
            }

            // Monte-Carlo error: 4 binomial standard deviations (common practice), so a wrong DP cannot hide.
            var exact = test.ReleaseProbability(p);
            AssertNear.Absolute(exact, (double)released / runs, 4 * Math.Sqrt(exact * (1 - exact) / runs) + 1e-9, $"release rate at p = {p}");
        }
    }

    [Theory]
    [InlineData(0.15, 0.30, 0.05, 0.10, 70)]
    [InlineData(0.1675, 0.31, 0.05, 0.05, 100)]
    [InlineData(0.12, 0.31, 0.10, 0.05, 40)]
    [InlineData(0.02, 0.10, 0.05, 0.05, 150)]
    public void Designs_keep_both_error_rates_at_every_error_rate_beyond_their_points(double p0, double p1, double alpha, double beta, int n)
    {
        var test = TruncatedSequentialTest.Design(p0, p1, alpha, beta, n);
        Assert.True(test.AchievedAlpha <= alpha, $"P(fail | p0) = {test.AchievedAlpha}");
        Assert.True(test.AchievedBeta <= beta, $"P(release | p1) = {test.AchievedBeta}");
        AssertNear.Absolute(1 - test.ReleaseProbability(p0), test.AchievedAlpha, 1e-15);

        // The release region is a lower set in the error count, so the release probability falls with p.
        var previous = 1.0;
        for (var p = 0.0; p <= 1.0; p += 0.01)
        {
            var release = test.ReleaseProbability(p);
            Assert.True(release <= previous + 1e-12, $"release probability rose at p = {p}");
            previous = release;
        }

        // Boundaries never cross and the last step always decides.
        Assert.InRange(test.MaxItems, 1, n);
        for (var k = 0; k <= test.MaxItems; k++)
        {
            Assert.True(test.FailAtLeast[k] > test.ReleaseAtMost[k]);
        }

        Assert.Equal(test.ReleaseAtMost[test.MaxItems] + 1, test.FailAtLeast[test.MaxItems]);
    }

    [Theory]
    [InlineData(0.15, 0.30, 0.05, 0.10, 70)]
    [InlineData(0.12, 0.31, 0.10, 0.05, 40)]
    [InlineData(0.05, 0.25, 0.05, 0.05, 50)]
    public void The_sequential_design_needs_fewer_items_than_the_fixed_test_it_may_fall_back_to(double p0, double p1, double alpha, double beta, int n)
    {
        var sequential = TruncatedSequentialTest.Design(p0, p1, alpha, beta, n);
        var fixedTest = TruncatedSequentialTest.Design(p0, p1, alpha, beta, n, fixedLength: true);
        Assert.True(fixedTest.IsFixedLength);
        Assert.False(sequential.IsFixedLength);
        var sequentialMean = (sequential.ExpectedItems(p0) + sequential.ExpectedItems(p1)) / 2;
        Assert.True(sequentialMean < 0.8 * fixedTest.MaxItems, $"mean expected items {sequentialMean} of at most {n}");
        AssertNear.Absolute(fixedTest.MaxItems, fixedTest.ExpectedItems(p0), 1e-9);
    }

    [Fact]
    public void The_fixed_length_test_is_the_binomial_test()
    {
        // Reference: MathNet.Numerics 5 Binomial.CDF (REFERENCES.md E).
        var test = TruncatedSequentialTest.Design(0.1, 0.3, 0.05, 0.10, 60, fixedLength: true);
        var c = test.ReleaseAtMost[60];
        foreach (var p in new[] { 0.05, 0.1, 0.2, 0.3, 0.5 })
        {
            AssertNear.Absolute(Binomial.CDF(p, 60, c), test.ReleaseProbability(p), 1e-12, $"P(Bin(60, {p}) ≤ {c})");
        }

        // The chosen cut is the one inside both bounds: one more error allowed breaks beta, one fewer breaks alpha
        // or leaves no more room.
        Assert.True(1 - Binomial.CDF(0.1, 60, c) <= 0.05 && Binomial.CDF(0.3, 60, c) <= 0.10);
    }

    [Fact]
    public void A_test_too_short_for_its_rates_is_refused_with_the_best_achievable_pair_and_the_length_needed()
    {
        // The settings under which the former gate released 58 % at target: 30 items cannot separate 0.15 from 0.30
        // at 5 % and 10 %. Normal-approximation sample size ((z_a·sqrt(p0 q0) + z_b·sqrt(p1 q1))/(p1 − p0))² ≈ 51
        // (common practice); the exact binomial answer is near it.
        Assert.False(TruncatedSequentialTest.TryDesign(0.15, 0.30, 0.05, 0.10, 30, out _, out var shortfall));
        Assert.NotNull(shortfall);
        Assert.True(shortfall.BestAlpha > 0.05 || shortfall.BestBeta > 0.10);
        Assert.InRange(shortfall.ShortestMaxItems!.Value, 40, 65);
        Assert.Contains("30 items", shortfall.ToString(), StringComparison.Ordinal);
        Assert.True(TruncatedSequentialTest.TryDesign(0.15, 0.30, 0.05, 0.10, shortfall.ShortestMaxItems.Value, out var shortest, out _));
        Assert.Equal(shortfall.ShortestMaxItems.Value, shortest.MaxItems);

        // Counts are discrete: a longer limit may not fit at its own length (70 does not, 64 does); the design then
        // stops at the longest length that fits.
        var longer = TruncatedSequentialTest.Design(0.15, 0.30, 0.05, 0.10, 70);
        Assert.InRange(longer.MaxItems, shortest.MaxItems, 70);
        Assert.True(longer.AchievedAlpha <= 0.05 && longer.AchievedBeta <= 0.10);
        Assert.False(TruncatedSequentialTest.TryDesign(0.15, 0.30, 0.05, 0.10, shortfall.ShortestMaxItems.Value - 1, out _, out _));

        // The best pair is the fixed test's, checked with MathNet: P(Bin(30, 0.15) > c) and P(Bin(30, 0.30) ≤ c).
        var cut = shortfall.BestReleaseAtMost;
        AssertNear.Absolute(1 - Binomial.CDF(0.15, 30, cut), shortfall.BestAlpha, 1e-12);
        AssertNear.Absolute(Binomial.CDF(0.30, 30, cut), shortfall.BestBeta, 1e-12);
    }

    [Fact]
    public void The_former_rule_misses_its_rates_where_the_exact_design_keeps_them()
    {
        // Before: Wald's bounds with a Wilson fallback at truncation (30 items, target 0.15, limit 0.30). Computed here
        // by path counting over the old decisions: far from 95 % release at the target.
        var old = new BernoulliSprt(0.15, 0.30, 0.05, 0.10);
        double oldRelease = 0;
        var mass = new double[32];
        mass[0] = 1;
        for (var n = 1; n <= 30; n++)
        {
            var next = new double[32];
            for (var e = 0; e < n; e++)
            {
                next[e] += mass[e] * 0.85;
                next[e + 1] += mass[e] * 0.15;
            }

            for (var e = 0; e <= n; e++)
            {
                var d = old.Decide(e, n);
                var fallbackPass = n == 30 && d == SprtDecision.Continue && ProportionIntervals.WilsonUpper(e, n, 0.95) <= 0.30;
                if (d == SprtDecision.AcceptNull || fallbackPass)
                {
                    oldRelease += next[e];
                }

                if (d != SprtDecision.Continue || n == 30)
                {
                    next[e] = 0;
                }
            }

            mass = next;
        }

        Assert.InRange(oldRelease, 0.50, 0.65);
        var exact = TruncatedSequentialTest.Design(0.15, 0.30, 0.05, 0.10, 70);
        Assert.True(exact.ReleaseProbability(0.15) >= 0.95);
    }

    [Fact]
    public void The_boundary_lines_have_Walds_slope()
    {
        // s = ln((1−p0)/(1−p1)) / (ln(p1/p0) + ln((1−p0)/(1−p1))) — Wald 1947 ch. 5 [pub]; 0.1 vs 0.3: 0.1840 (derived).
        var slope = TruncatedSequentialTest.WaldSlope(0.1, 0.3);
        AssertNear.Absolute(Math.Log(0.9 / 0.7) / (Math.Log(3) + Math.Log(0.9 / 0.7)), slope, 1e-15, Wald1947);
        var test = TruncatedSequentialTest.Design(0.1, 0.3, 0.05, 0.05, 100);
        // Between two release points k apart the boundary rises by about s·k errors.
        var first = Enumerable.Range(0, 100).First(k => test.ReleaseAtMost[k] >= 0);
        var rise = test.ReleaseAtMost[first + 50] - test.ReleaseAtMost[first];
        Assert.InRange(rise, Math.Floor(slope * 50) - 1, Math.Ceiling(slope * 50) + 1);
    }

    [Fact]
    public void Bad_arguments_are_refused()
    {
        Assert.Throws<ArgumentOutOfRangeException>(() => TruncatedSequentialTest.TryDesign(0.3, 0.1, 0.05, 0.1, 30, out _, out _));
        Assert.Throws<ArgumentOutOfRangeException>(() => TruncatedSequentialTest.TryDesign(0.1, 0.3, 0, 0.1, 30, out _, out _));
        Assert.Throws<ArgumentOutOfRangeException>(() => TruncatedSequentialTest.TryDesign(0.1, 0.3, 0.05, 0.1, 0, out _, out _));
        var test = TruncatedSequentialTest.Design(0.1, 0.3, 0.05, 0.1, 60);
        Assert.Throws<ArgumentOutOfRangeException>(() => test.Decide(0, 61));
        Assert.Throws<ArgumentOutOfRangeException>(() => test.Evaluate(double.NaN));
    }

    /// <summary>A design that fits any length (wide rates), for the checks that only need some boundaries.</summary>
    private static TruncatedSequentialTest LooseDesign(double p0, double p1, int n) =>
        TruncatedSequentialTest.Design(p0, p1, 0.45, 0.45, n);
}
