using TeachServe.Core.Fitting;
using TeachServe.Core.Model;
using TeachServe.Core.Tests.Engine;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Fitting;

public class LearnerFitTests
{
    // 8 hypotheses over 12 teach and 8 test items, 3 labels: small enough for many fits, rich enough to identify alpha.
    private static readonly ModelVersion Model = TinyModels.Random(77, m: 8, teach: 12, test: 8, labels: 3, alpha: 1.5, lapse: 0.05);

    // Fewer profile points and looser inner tolerances than the defaults keep 40 fits fast; the interval ends are
    // still refined by root finding, to 0.001 in log alpha or lapse, far below their standard errors (≈ 0.1, 0.005).
    private static readonly FitOptions TestOptions = new() { ProfilePoints = 13, InnerTolerance = 1e-4, CrossingTolerance = 1e-3 };

    private static RecordedSession[] Record(double alpha, double lapse, int count, ulong seed) =>
        SimulatedSessions.Record(Model, SimulatedSessions.TeachAllThenTestAll(Model), alpha, lapse, count, seed);

    [Fact]
    public void Profile_intervals_cover_the_true_parameters_at_about_the_nominal_rate()
    {
        // Wilks (1938): 2·(ℓmax − ℓprofile) at the true value is asymptotically χ²₁, so 95 % profile intervals
        // cover it about 95 % of the time. Over 80 fits we require ≥ 90 % for each parameter (P(Bin(80, 0.95) < 72)
        // ≈ 0.02, MathNet Binomial.CDF): common practice for a coverage check.
        (double Alpha, double Lapse)[] truths = [(0.8, 0.05), (0.8, 0.2), (2.0, 0.05), (2.0, 0.2)];
        const int repetitions = 20;
        var fits = new FitResult[truths.Length * repetitions];
        Parallel.For(0, fits.Length, i =>
        {
            var (alpha, lapse) = truths[i / repetitions];
            fits[i] = LearnerFit.Fit(Model, Record(alpha, lapse, 150, (ulong)(7919 * i) + 3), TestOptions);
        });

        int alphaCovered = 0, lapseCovered = 0, informative = 0;
        for (var i = 0; i < fits.Length; i++)
        {
            var (alpha, lapse) = truths[i / repetitions];
            var fit = fits[i];
            Assert.True(fit.Converged, $"fit {i} did not converge");
            alphaCovered += fit.AlphaProfile.Interval.Contains(alpha) ? 1 : 0;
            lapseCovered += fit.LapseProfile.Interval.Contains(lapse) ? 1 : 0;

            // Coverage alone is passed by intervals that cover everything; these must also be closed and tight
            // enough to tell the grid's values apart (alpha within a factor 2 of its midpoint, lapse ± 0.06).
            var a = fit.AlphaProfile.Interval;
            var l = fit.LapseProfile.Interval;
            if (!a.LowOpen && !a.HighOpen && !l.LowOpen && !l.HighOpen && a.High / a.Low < 4 && l.High - l.Low < 0.12)
            {
                informative++;
            }
        }

        Assert.True(alphaCovered >= 72, $"alpha covered in {alphaCovered}/80");
        Assert.True(lapseCovered >= 72, $"lapse covered in {lapseCovered}/80");
        Assert.True(informative >= 72, $"informative intervals in {informative}/80");

        // Consistency: the mean estimate of each cell lies near the truth (within 20 % for alpha, 0.02 for lapse):
        // common practice.
        for (var c = 0; c < truths.Length; c++)
        {
            var cell = fits.Skip(c * repetitions).Take(repetitions).ToArray();
            AssertNear.Relative(truths[c].Alpha, cell.Average(f => f.Alpha), 0.2, $"alpha, cell {c}");
            AssertNear.Absolute(truths[c].Lapse, cell.Average(f => f.Lapse), 0.02, $"lapse, cell {c}");
        }
    }

    [Fact]
    public void The_estimate_maximises_the_likelihood_and_the_interval_ends_sit_on_the_chi_square_threshold()
    {
        var sessions = Record(1.2, 0.1, 120, 41);
        var fit = LearnerFit.Fit(Model, sessions);
        Assert.Equal(120, fit.SessionCount);
        Assert.Equal(120 * 20, fit.AnswerCount);
        AssertNear.Relative(LearnerFit.LogLikelihood(Model, sessions, fit.Alpha, fit.Lapse), fit.MaxLogLikelihood, 1e-12);

        // Second method for the maximum: a plain scan of an 11 × 11 grid around it must not beat it (common practice).
        for (var i = -5; i <= 5; i++)
        {
            for (var j = -5; j <= 5; j++)
            {
                var alpha = fit.Alpha * Math.Exp(i * 0.04);
                var lapse = Math.Max(0, fit.Lapse + (j * 0.004));
                Assert.True(LearnerFit.LogLikelihood(Model, sessions, alpha, lapse) <= fit.MaxLogLikelihood + 1e-7);
            }
        }

        // At each finite end the profile deviance equals χ²₁(0.95) = 3.841459 (standard tables; common practice):
        // recompute the profile there by a plain scan of the other parameter with the public likelihood.
        var threshold = 3.841459;
        foreach (var end in new[] { fit.AlphaProfile.Interval.Low, fit.AlphaProfile.Interval.High })
        {
            var profile = ScanMax(l => LearnerFit.LogLikelihood(Model, sessions, end, l), 0.0, 0.5);
            AssertNear.Absolute(threshold, 2 * (fit.MaxLogLikelihood - profile), 0.01, $"alpha end {end}");
        }

        foreach (var end in new[] { fit.LapseProfile.Interval.Low, fit.LapseProfile.Interval.High })
        {
            var profile = ScanMax(u => LearnerFit.LogLikelihood(Model, sessions, Math.Exp(u), end), Math.Log(0.05), Math.Log(20));
            AssertNear.Absolute(threshold, 2 * (fit.MaxLogLikelihood - profile), 0.01, $"lapse end {end}");
        }

        // The profiles peak at ℓmax, and both intervals contain the estimate.
        Assert.True(fit.AlphaProfile.Points.Max(p => p.LogLikelihood) <= fit.MaxLogLikelihood);
        Assert.True(fit.AlphaProfile.Interval.Contains(fit.Alpha));
        Assert.True(fit.LapseProfile.Interval.Contains(fit.Lapse));
        Assert.Equal(25, fit.AlphaProfile.Points.Count);
        Assert.Equal(0.0, fit.LapseProfile.Points[0].Lapse);
    }

    [Fact]
    public void Without_teaching_steps_alpha_is_not_identified_and_its_interval_is_open_at_both_ends()
    {
        // Test answers only: nobody ever switches, so the likelihood does not depend on alpha (DESIGN 2.2) [derived].
        var random = new SeededRandom(3);
        var sessions = Enumerable.Range(0, 30)
            .Select(_ => new RecordedSession(Enumerable.Range(12, 8).Select(x => new RecordedStep(x, random.NextInt(3), false)).ToArray()))
            .ToArray();
        var fit = LearnerFit.Fit(Model, sessions, TestOptions);
        var interval = fit.AlphaProfile.Interval;
        Assert.True(interval.LowOpen && interval.HighOpen);
        Assert.Equal((0.01, 20.0), (interval.Low, interval.High));
        Assert.False(fit.LapseProfile.Interval.LowOpen && fit.LapseProfile.Interval.HighOpen);
    }

    [Fact]
    public void Learners_without_lapses_give_a_lapse_interval_open_at_zero()
    {
        var fit = LearnerFit.Fit(Model, Record(1.5, 0.0, 150, 8), TestOptions);
        Assert.True(fit.LapseProfile.Interval.LowOpen);
        Assert.Equal(0.0, fit.LapseProfile.Interval.Low);
        Assert.InRange(fit.LapseProfile.Interval.High, 1e-6, 0.03);
        Assert.True(fit.Lapse < 0.01);
    }

    [Fact]
    public void Cancellation_is_honoured()
    {
        var sessions = Record(1.0, 0.1, 20, 5);
        using var source = new CancellationTokenSource();
        source.Cancel();
        Assert.ThrowsAny<OperationCanceledException>(() => LearnerFit.Fit(Model, sessions, ct: source.Token));
    }

    [Fact]
    public void Options_outside_their_ranges_are_refused()
    {
        var sessions = Record(1.0, 0.1, 5, 5);
        Assert.Throws<ArgumentOutOfRangeException>(() => LearnerFit.Fit(Model, sessions, new FitOptions { MaxAlpha = 25 }));
        Assert.Throws<ArgumentOutOfRangeException>(() => LearnerFit.Fit(Model, sessions, new FitOptions { MaxLapse = 1.0 }));
        Assert.Throws<ArgumentOutOfRangeException>(() => LearnerFit.Fit(Model, sessions, new FitOptions { Confidence = 1.0 }));
        Assert.Throws<ArgumentOutOfRangeException>(() => LearnerFit.Fit(Model, sessions, new FitOptions { ProfilePoints = 2 }));
        Assert.Throws<ArgumentOutOfRangeException>(() => LearnerFit.LogLikelihood(Model, sessions, 0.0, 0.1));
        Assert.Throws<ArgumentOutOfRangeException>(() => LearnerFit.LogLikelihood(Model, sessions, 1.0, 1.5));
    }

    /// <summary>Maximum of f on [lo, hi]: a 41-point scan, then three rounds of 10× finer scans around the best point.</summary>
    private static double ScanMax(Func<double, double> f, double lo, double hi)
    {
        var best = double.NegativeInfinity;
        var bestX = lo;
        for (var round = 0; round < 4; round++)
        {
            var step = (hi - lo) / 40;
            for (var i = 0; i <= 40; i++)
            {
                var x = lo + (i * step);
                var v = f(x);
                if (v > best)
                {
                    (best, bestX) = (v, x);
                }
            }

            (lo, hi) = (Math.Max(lo, bestX - (2 * step)), Math.Min(hi, bestX + (2 * step)));
        }

        return best;
    }
}
