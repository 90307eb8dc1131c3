using MathNet.Numerics.Distributions;
using TeachServe.Core.LiveQuality;
using TeachServe.Core.Model;
using TeachServe.Core.Tests.Cli;
using TeachServe.Core.Tests.Engine;
using Xunit;

namespace TeachServe.Core.Tests.LiveQuality;

public sealed class RefresherAndStudyTests(SeedModels seeds) : IClassFixture<SeedModels>
{
    [Theory]
    [InlineData(10, 0.1675, 0.9)]
    [InlineData(8, 0.05, 0.95)]
    [InlineData(20, 0.3, 0.8)]
    public void Check_allows_the_smallest_error_count_an_annotator_at_target_stays_within(int n, double p, double pass)
    {
        var k = RefresherRun.AllowedErrorsFor(n, p, pass);
        Assert.True(Binomial.CDF(p, n, k) >= pass);
        Assert.True(k == 0 || Binomial.CDF(p, n, k - 1) < pass);
    }

    [Fact]
    public void Refresher_teaches_a_drifted_annotator_back_within_target_on_the_threshold_toy()
    {
        // Items 1..8 (teach) and 9..12 (test), thresholds θ = 1..13, target θ = 5. The annotator drifted to θ = 1
        // (everything positive); the live belief has seen it answer so.
        var model = TinyModels.Thresholds(8, 5, alpha: 2.0, lapse: 0.02, testItems: 4);
        var drifted = 0;
        var live = new LiveBelief(model, 0.02, model.Prior, new ForgettingRate(0.01));
        for (var item = 0; item < model.TeachCount; item++)
        {
            live.Observe(new LiveCheck(item, model.Predict(drifted, item), model.TrueLabel(item)));
        }

        Assert.True(live.PredictedRuleError() > 0.2);
        var run = RefresherRun.Start(model, live, model.Q, new RefresherSettings { TargetRuleError = 0.1, CheckItems = 4 }, seed: 3);
        var shown = new List<int>();
        var hypothesis = drifted;
        while (run.Phase == RefresherPhase.Teaching)
        {
            var item = run.CurrentItem;
            shown.Add(item);
            Assert.True(model.IsTeachItem(item));
            run.Answer(model.Predict(hypothesis, item));

            // An eliminating learner (for the test): once shown wrong, it takes the target.
            if (model.Mistake(hypothesis, item))
            {
                hypothesis = model.TargetIndex;
            }
        }

        Assert.InRange(shown.Count, 1, 10);
        Assert.Equal(shown.Count, shown.Distinct().Count());
        Assert.True(model.Mistake(drifted, shown[0]), "the first item is one the drifted rule gets wrong");
        while (!run.IsEnded)
        {
            Assert.False(model.IsTeachItem(run.CurrentItem));
            run.Answer(model.Predict(hypothesis, run.CurrentItem));
        }

        Assert.Equal(RefresherPhase.Passed, run.Phase);
    }

    private static LiveQualityStudyOptions Small(int threads) => new()
    {
        Annotators = 40,
        ChangeAt = 40,
        InControlHorizon = 1500,
        AfterChangeHorizon = 400,
        RunLengths = [100, 300],
        RefresherRuns = 12,
        DeployedRunLength = 200,
        ForgettingRates = [0.05],
        Threads = threads,
        Seed = 7,
    };

    [Fact]
    public void Study_is_reproducible_across_thread_counts_and_sees_random_answers_at_once()
    {
        var (project, model) = seeds.Get("weld-seams");
        var gate = project.Settings.Gate;
        var lapse = project.Settings.Learner.Lapse;
        var one = LiveQualityStudy.Run(model, gate.TargetError, gate.TargetError + gate.Test.Delta, lapse, Small(1));
        var two = LiveQualityStudy.Run(model, gate.TargetError, gate.TargetError + gate.Test.Delta, lapse, Small(2));
        Assert.Equal(one.Delays, two.Delays);
        Assert.Equal(one.Levels, two.Levels);
        Assert.Equal(one.Refreshers, two.Refreshers);

        // Pooled ARL0 grows with the limit for each monitor (more false alarms at a lower limit).
        foreach (var monitor in new[] { MonitorNames.CountCusum, MonitorNames.Window })
        {
            var arl = one.Levels.Where(l => l.Monitor == monitor).Select(l => l.InControlRunLength).ToArray();
            Assert.True(arl[^1] > 5 * arl[0], monitor);
        }

        // Random answers (error 0.5 against a target answer error near 0.17) are caught within a few dozen checks,
        // and a refresher never brings a random clicker within target.
        var random = one.Delays.Where(d => d.Scenario == "random answers" && d.Monitor == MonitorNames.CountCusum).ToArray();
        Assert.All(random, d => Assert.InRange(d.Delay, 1, 40));
        var clicker = one.Refreshers.Single(r => r.Scenario == "random answers");
        Assert.True(clicker.Runs > 0);
        Assert.Equal(0, clicker.UnderTarget);
        var shortcut = one.Refreshers.Single(r => r.Scenario == "shortcut rule");
        Assert.True(shortcut.MedianItems <= 10);

        // The deployed item-aware chart, calibrated on other simulated annotators, keeps its ARL0 on the study's own
        // stable annotators within 4 combined standard errors.
        var itemAware = one.ItemAware;
        var calibration = itemAware.Design.Calibration!;
        Assert.Equal(200, calibration.TargetRunLength);
        var combined = Math.Sqrt(Math.Pow(calibration.StandardError, 2) + Math.Pow(itemAware.MeasuredStandardError, 2));
        Assert.InRange(itemAware.MeasuredRunLength, calibration.InControlRunLength - (4 * combined), calibration.InControlRunLength + (4 * combined));
        Assert.Contains(one.Ratios, r => r.Monitor == MonitorNames.ItemAwareCusum && r.Scenario == "random answers" && r.Ratio < 1);
    }

    [Fact]
    public void Command_prints_the_tables_and_refuses_bad_arguments()
    {
        var (code, output, error) = CliRun.Run("live-quality", CliRun.Seed("weld-seams"), "--annotators", "20", "--refreshers", "5", "--arl0", "100,200", "--threads", "2", "--fit", "4");
        Assert.True(code == 0, error);
        Assert.Contains("count CUSUM designs", output, StringComparison.Ordinal);
        Assert.Contains("| shortcut rule | 100 |", output, StringComparison.Ordinal);
        Assert.Contains("refreshers at the first alarm", output, StringComparison.Ordinal);
        Assert.Contains("item-aware CUSUM: alternatives rules near target, random answers", output, StringComparison.Ordinal);
        Assert.Contains("| item-aware / window |", output, StringComparison.Ordinal);
        Assert.Contains("true 0.02/check: fitted", output, StringComparison.Ordinal);

        var bad = CliRun.Run("live-quality", CliRun.Seed("weld-seams"), "--drift", "0.05");
        Assert.NotEqual(0, bad.Code);
        Assert.Contains("--drift", bad.Error, StringComparison.Ordinal);
        var unknown = CliRun.Run("live-quality", CliRun.Seed("weld-seams"), "--item-alternatives", "above,sideways");
        Assert.NotEqual(0, unknown.Code);
        Assert.Contains("--item-alternatives", unknown.Error, StringComparison.Ordinal);
        Assert.NotEqual(0, CliRun.Run("live-quality").Code);
    }
}
