using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Teaching;

namespace TeachServe.Core.Tests.Engine;

/// <summary>
/// Exposure control of test items (Sympson & Hetter, "Controlling item-exposure rates in computerized adaptive
/// testing", Proc. 27th Conf. Military Testing Association, 1985): an item drawn for a test is administered with
/// probability K and otherwise passed over for the session.
/// </summary>
public class TestExposureTests
{
    private static readonly ModelVersion Model = TinyModels.Random(91, m: 200, teach: 40, test: 30, labels: 3, alpha: 1.5, lapse: 0.05);

    private static SessionOptions Options(ulong seed, IReadOnlyList<double>? administration = null) => new()
    {
        Policy = PolicyNames.Random,
        Gate = new GateSettings
        {
            TargetError = 0.1,
            Confidence = 0.8,
            MaxTeachingItems = 4,
            Retakes = 2,
            Test = new TestSettings { Mode = TestModes.Sequential, MaxItems = 8, Delta = 0.4, Alpha = 0.2, Beta = 0.2, TailItems = 3 },
        },
        Seed = seed,
        TestAdministration = administration,
    };

    /// <summary>Every item served (teaching and test) of a session answered by a seeded 60 %-correct annotator.</summary>
    private static List<int> Served(SessionOptions options, ulong answerSeed)
    {
        var run = SessionRun.Start(Model, options);
        var random = new SeededRandom(answerSeed);
        var served = new List<int>();
        while (!run.IsEnded && served.Count < 300)
        {
            served.Add(run.CurrentItem);
            run.Answer(random.NextDouble() < 0.6 ? Model.TrueLabel(run.CurrentItem) : random.NextInt(Model.LabelCount));
        }

        return served;
    }

    [Fact]
    public void Without_administration_probabilities_the_sessions_are_those_of_before()
    {
        // Pinned from the engine before exposure control existed: replays of recorded sessions must not change.
        Assert.Equal(
            "17,8,24,38,52,42,41,47,57,61,49,68,35,11,14,2,45,53,50,60,65,67,51,40,20,32,39,6,62,55,69,44,46,48,66,56",
            string.Join(",", Served(Options(77), 5)));
        // Probabilities of 1 draw nothing: the same sessions again.
        var ones = Enumerable.Repeat(1.0, Model.TestCount).ToArray();
        for (ulong seed = 1; seed <= 20; seed++)
        {
            Assert.Equal(Served(Options(seed), seed), Served(Options(seed, ones), seed));
        }
    }

    [Fact]
    public void Items_drawn_are_passed_over_with_probability_one_minus_K()
    {
        // Items 0..9 of the pool get K = 0.25, the rest 1. Each attempt draws 11 items (8 + a tail of 3) from 30
        // in random order, so an item of K = 1 is drawn with probability about 11/30 and an item of K = 0.25 with
        // about a quarter of that (slightly more, as passed-over items let later ones in). Seeded, 4,000 sessions.
        var k = Enumerable.Range(0, Model.TestCount).Select(t => t < 10 ? 0.25 : 1.0).ToArray();
        var low = 0;
        var high = 0;
        const int sessions = 4_000;
        for (var s = 0; s < sessions; s++)
        {
            var run = SessionRun.Start(Model, Options(SeededRandom.Derive(3, (ulong)s), k) with { Gate = Options(0).Gate with { Retakes = 0 } });
            while (run.Phase == SessionPhase.Teaching) run.Answer(Model.TrueLabel(run.CurrentItem));
            var seen = new HashSet<int>();
            while (!run.IsEnded)
            {
                seen.Add(run.CurrentItem - Model.TeachCount);
                run.Answer(Model.TrueLabel(run.CurrentItem));
            }

            low += seen.Count(t => t < 10);
            high += seen.Count(t => t >= 10);
        }

        var lowRate = low / (10.0 * sessions);
        var highRate = high / (20.0 * sessions);
        Assert.InRange(lowRate / highRate, 0.2, 0.4);

        // Without K the two groups are shown alike.
        var plainLow = 0;
        var plainHigh = 0;
        for (var s = 0; s < sessions; s++)
        {
            var run = SessionRun.Start(Model, Options(SeededRandom.Derive(3, (ulong)s)) with { Gate = Options(0).Gate with { Retakes = 0 } });
            while (run.Phase == SessionPhase.Teaching) run.Answer(Model.TrueLabel(run.CurrentItem));
            while (!run.IsEnded)
            {
                var t = run.CurrentItem - Model.TeachCount;
                if (t < 10) plainLow++;
                else plainHigh++;
                run.Answer(Model.TrueLabel(run.CurrentItem));
            }
        }

        Assert.InRange(plainLow / (10.0 * sessions) / (plainHigh / (20.0 * sessions)), 0.9, 1.1);
    }

    [Fact]
    public void A_pool_too_small_for_K_still_fills_the_test_and_replays_exactly()
    {
        // K so small that almost every draw is passed over: the attempt still gets its full length (the test's
        // error rates need it), taking passed-over items in their drawn order.
        var k = Enumerable.Repeat(1e-9, Model.TestCount).ToArray();
        var options = Options(41, k);
        var run = SessionRun.Start(Model, options);
        var answers = new List<int>();
        var random = new SeededRandom(8);
        var testItems = 0;
        while (!run.IsEnded)
        {
            testItems += run.Phase == SessionPhase.Testing ? 1 : 0;
            var label = random.NextDouble() < 0.6 ? Model.TrueLabel(run.CurrentItem) : random.NextInt(Model.LabelCount);
            answers.Add(label);
            run.Answer(label);
        }

        Assert.True(testItems > 0);
        Assert.Equal(run.Evidence().TestAnswers.Select(a => a.Item), SessionRun.Replay(Model, options, answers).Evidence().TestAnswers.Select(a => a.Item));
        Assert.Throws<ArgumentException>(() => Served(Options(1, [0.5, 0.5]), 1));
    }

    [Theory]
    // tested sessions, sessions shown the item, r_max → K = min(1, r_max / (shown / tested))
    [InlineData(0, 0, 0.3, 1.0)]
    [InlineData(10, 0, 0.3, 1.0)]
    [InlineData(10, 3, 0.3, 1.0)]
    [InlineData(10, 5, 0.3, 0.6)]
    [InlineData(1, 1, 0.25, 0.25)]
    [InlineData(40, 20, 1.0, 1.0)]
    public void Administration_probability_is_the_exposure_target_over_the_observed_rate(int tested, int shown, double maxExposure, double expected)
    {
        var k = ExposureControl.AdministrationProbabilities([shown, 0], tested, maxExposure);
        Assert.Equal(expected, k[0], 12);
        Assert.Equal(1.0, k[1]);
    }
}
