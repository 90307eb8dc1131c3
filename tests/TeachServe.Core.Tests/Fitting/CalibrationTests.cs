using TeachServe.Core.Fitting;
using TeachServe.Core.Tests.Engine;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Fitting;

public class CalibrationTests
{
    private static readonly CalibrationCase[] HandExample =
    [
        new(0.10, 10, 1),
        new(0.15, 4, 2),
        new(0.50, 6, 3),
        new(0.90, 2, 2),
    ];

    [Fact]
    public void Brier_score_and_bins_match_a_hand_computed_example()
    {
        var report = Calibration.Compute(HandExample, new CalibrationOptions { Bins = 2 });

        // Worked by hand [derived]: Brier = Σ w(1−p)² + (n−w)p² over 22 answers
        // = (0.81 + 0.09) + (1.445 + 0.045) + (0.75 + 0.75) + 0.02 = 3.91; 3.91 / 22 = 0.177727…
        AssertNear.Relative(3.91 / 22, report.BrierScore, 1e-13);
        Assert.Equal(4, report.Sessions);
        Assert.Equal(22, report.TestAnswered);
        Assert.Equal(8, report.TestErrors);

        var low = report.Bins[0];
        Assert.Equal((0.0, 0.5, 2, 14, 3), (low.Lower, low.Upper, low.Sessions, low.TestAnswered, low.TestErrors));
        AssertNear.Relative(1.6 / 14, low.MeanPredicted, 1e-13);  // (0.10·10 + 0.15·4) / 14, answer-weighted [derived]
        AssertNear.Relative(3.0 / 14, low.MeanObserved, 1e-13);

        var high = report.Bins[1];
        Assert.Equal((0.5, 1.0, 2, 8, 5), (high.Lower, high.Upper, high.Sessions, high.TestAnswered, high.TestErrors));
        AssertNear.Relative(0.6, high.MeanPredicted, 1e-13);       // (0.5·6 + 0.9·2) / 8 [derived]
        AssertNear.Relative(0.625, high.MeanObserved, 1e-13);
    }

    [Fact]
    public void Bin_interval_is_the_Wilson_interval_of_the_pooled_errors()
    {
        // 81 errors in 263 answers, split over three sessions in one bin: Wilson 0.2553 – 0.3662
        // (Newcombe, Stat Med 17:857, 1998, Table II [via]; REFERENCES.md B).
        CalibrationCase[] cases = [new(0.31, 100, 30), new(0.32, 100, 31), new(0.33, 63, 20)];
        var bin = Calibration.Compute(cases).Bins[3];
        Assert.Equal((263, 81), (bin.TestAnswered, bin.TestErrors));
        AssertNear.Decimals(0.2553, bin.ObservedInterval.Low, 4);
        AssertNear.Decimals(0.3662, bin.ObservedInterval.High, 4);
    }

    [Fact]
    public void Empty_bins_are_reported_as_NaN_and_left_out_of_the_plot()
    {
        var report = Calibration.Compute(HandExample, new CalibrationOptions { Bins = 10 });
        Assert.Equal(10, report.Bins.Count);
        Assert.Equal(0, report.Bins[3].TestAnswered);
        Assert.True(double.IsNaN(report.Bins[3].MeanObserved));
        var plot = Calibration.ReliabilityPlot(report);
        // Non-empty bins: [0.1,0.2) holds 0.10 and 0.15, [0.5,0.6) and [0.9,1.0] one each.
        Assert.Equal(3, plot.Points.Count);
        Assert.Equal(11, plot.BinEdges.Count);
        Assert.Equal(1.0, plot.AxisMax);
        Assert.Equal(report.Bins[1].MeanObserved, plot.Points[0].MeanObserved);
        Assert.Equal(report.Bins[1].ObservedInterval.High, plot.Points[0].High);
    }

    [Theory]
    [InlineData(1.0, true)]
    [InlineData(1.6, false)]
    public void A_calibrated_forecaster_has_mean_predicted_near_mean_observed_in_every_bin(double miscalibration, bool calibrated)
    {
        // Synthetic sessions whose test answers are wrong with probability (miscalibration × predicted error);
        // with factor 1 the predictions are calibrated by construction (common practice). The factor-1.6 case
        // shows the check can fail.
        var random = new SeededRandom(2024);
        var cases = new CalibrationCase[4000];
        for (var i = 0; i < cases.Length; i++)
        {
            var p = 0.6 * random.NextDouble();
            var errors = 0;
            for (var t = 0; t < 20; t++)
            {
                if (random.NextDouble() < Math.Min(1, miscalibration * p))
                {
                    errors++;
                }
            }

            cases[i] = new CalibrationCase(p, 20, errors);
        }

        var report = Calibration.Compute(cases, new CalibrationOptions { Bins = 6, MaxPredicted = 0.6 });
        var allClose = report.Bins.All(b =>
        {
            // 4 binomial standard errors of the bin's pooled rate (answers in a session share p, but are
            // independent given it): common practice.
            var se = Math.Sqrt(b.MeanPredicted * (1 - b.MeanPredicted) / b.TestAnswered);
            return b.TestAnswered > 1000 && Math.Abs(b.MeanObserved - b.MeanPredicted) <= 4 * se;
        });
        Assert.Equal(calibrated, allClose);
        if (calibrated)
        {
            // Brier score of a calibrated forecast: E[p(1−p)] for p ~ U(0, 0.6) = 0.3 − 0.12 = 0.18 [derived].
            AssertNear.Absolute(0.18, report.BrierScore, 0.005);
        }
    }

    [Fact]
    public void From_recorded_sessions_only_the_test_answers_after_the_last_teaching_step_count()
    {
        // Thresholds on x = 1..4 (target θ = 3), test items x = 5..8, all labelled 1.
        var model = TinyModels.Thresholds(4, 3, alpha: 1.0, testItems: 4);
        RecordedSession retake = new(
        [
            new RecordedStep(0, 0, true),
            new RecordedStep(4, 0, false),  // first attempt, before more teaching: not calibrated against
            new RecordedStep(1, 1, true),
            new RecordedStep(5, 1, false),
            new RecordedStep(6, 0, false),  // wrong
            new RecordedStep(7, 1, false),
        ]) { PredictedError = 0.25 };
        RecordedSession unpredicted = new([new RecordedStep(4, 0, false)]);
        var report = Calibration.Compute(model, [retake, unpredicted], new CalibrationOptions { Bins = 4 });
        Assert.Equal((1, 3, 1), (report.Sessions, report.TestAnswered, report.TestErrors));
        // Brier = (1·0.75² + 2·0.25²)/3 = 0.6875/3 [derived].
        AssertNear.Relative(0.6875 / 3, report.BrierScore, 1e-13);
        Assert.Equal(3, report.Bins[1].TestAnswered);

        Assert.Throws<ArgumentException>(() => Calibration.Compute(model, [unpredicted]));
        Assert.Throws<ArgumentException>(() => Calibration.Compute([]));
        Assert.Throws<ArgumentException>(() => Calibration.Compute([new CalibrationCase(1.2, 3, 1)]));
        Assert.Throws<ArgumentException>(() => Calibration.Compute([new CalibrationCase(0.2, 3, 4)]));
    }
}
