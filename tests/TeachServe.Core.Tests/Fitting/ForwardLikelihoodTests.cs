using TeachServe.Core.Fitting;
using TeachServe.Core.Model;
using TeachServe.Core.Tests.Engine;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Fitting;

public class ForwardLikelihoodTests
{
    // Teach items 0..2, test items 3..4; teaching and test steps interleaved, as with a retake.
    private static readonly (int Item, bool Teach)[] Schedule = [(0, true), (3, false), (1, true), (2, true), (4, false)];

    private static RecordedSession RandomSession(ModelVersion model, SeededRandom random, bool fromTarget)
    {
        var steps = Schedule
            .Select(s => new RecordedStep(s.Item, fromTarget ? model.Predict(model.TargetIndex, s.Item) : random.NextInt(model.LabelCount), s.Teach))
            .ToArray();
        return new RecordedSession(steps);
    }

    private static LearnerPaths.Step[] AsPathSteps(RecordedSession session) =>
        session.Steps.Select(s => new LearnerPaths.Step(s.Item, s.Label, s.Teaching)).ToArray();

    [Theory]
    [InlineData(1, 2, 1.3, 0.1)]
    [InlineData(2, 2, 0.4, 0.3)]
    [InlineData(3, 3, 2.0, 0.05)]
    [InlineData(4, 3, 0.8, 0.2)]
    [InlineData(5, 2, 6.0, 0.5)]
    [InlineData(6, 3, 1.0, 0.01)]
    public void Forward_likelihood_equals_brute_force_path_enumeration(int seed, int labels, double alpha, double lapse)
    {
        var model = TinyModels.Random(seed, m: 6, teach: 3, test: 2, labels, alpha, lapse);
        Assert.InRange(model.HypothesisCount, 3, 6);
        var random = new SeededRandom((ulong)(seed * 31));
        for (var rep = 0; rep < 4; rep++)
        {
            var session = RandomSession(model, random, fromTarget: false);
            var actual = LearnerFit.LogLikelihood(model, [session], alpha, lapse);

            // REFERENCES.md E: brute-force enumerator [derived] — P(a_1..a_T) summed over all learner paths.
            var (_, expected) = LearnerPaths.Enumerate(model, ModelVersion.DisagreementFactor(alpha), lapse, AsPathSteps(session));
            AssertNear.Relative(Math.Log(expected), actual, 1e-12, $"rep {rep}");
        }
    }

    [Theory]
    [InlineData(7, 2)]
    [InlineData(8, 3)]
    public void With_no_lapses_answers_some_hypothesis_gives_match_the_enumerator(int seed, int labels)
    {
        var model = TinyModels.Random(seed, m: 6, teach: 3, test: 2, labels, alpha: 1.5, lapse: 0);
        var session = RandomSession(model, new SeededRandom(1), fromTarget: true);
        var actual = LearnerFit.LogLikelihood(model, [session], 1.5, 0.0);

        // REFERENCES.md E: brute-force enumerator [derived].
        var (_, expected) = LearnerPaths.Enumerate(model, model.Q, 0.0, AsPathSteps(session));
        Assert.True(expected > 0);
        AssertNear.Relative(Math.Log(expected), actual, 1e-12);
    }

    [Fact]
    public void An_answer_no_hypothesis_gives_is_impossible_without_lapses()
    {
        // Thresholds h_θ(x) = 1 iff x ≥ θ on x = 1..3: any θ that says 1 at x = 1 says 1 at x = 2, so the answers
        // (x1 → 1, x2 → 0) fit no hypothesis; with observe-only steps nobody switches, so their probability is 0
        // [derived], and the enumerator agrees.
        var model = TinyModels.Thresholds(3, 2, alpha: 1.0);
        RecordedSession session = new([new RecordedStep(0, 1, false), new RecordedStep(1, 0, false)]);
        Assert.Equal(double.NegativeInfinity, LearnerFit.LogLikelihood(model, [session], 1.0, 0.0));
        var (_, expected) = LearnerPaths.Enumerate(model, model.Q, 0.0, AsPathSteps(session));
        Assert.Equal(0.0, expected);
        Assert.True(double.IsFinite(LearnerFit.LogLikelihood(model, [session], 1.0, 0.1)));
    }

    [Fact]
    public void Sessions_are_independent_so_their_log_likelihoods_add()
    {
        var model = TinyModels.Random(9, m: 6, teach: 3, test: 2, labels: 3, alpha: 1.0, lapse: 0.1);
        var random = new SeededRandom(9);
        var a = RandomSession(model, random, false);
        var b = RandomSession(model, random, false);
        // Independence of annotators: common practice.
        AssertNear.Relative(
            LearnerFit.LogLikelihood(model, [a], 1.0, 0.1) + LearnerFit.LogLikelihood(model, [b], 1.0, 0.1),
            LearnerFit.LogLikelihood(model, [a, b], 1.0, 0.1),
            1e-13);
    }

    [Fact]
    public void Uninformative_answers_have_likelihood_one_over_k_per_answer()
    {
        // lapse = 1: every answer has probability 1/K whatever the learner holds (DESIGN 2.3) [derived].
        var model = TinyModels.Random(10, m: 30, teach: 20, test: 10, labels: 3, alpha: 1.0, lapse: 1.0);
        var random = new SeededRandom(10);
        var steps = Enumerable.Range(0, 25).Select(i => new RecordedStep(i, random.NextInt(3), i < 20)).ToArray();
        AssertNear.Relative(25 * Math.Log(1.0 / 3), LearnerFit.LogLikelihood(model, [new RecordedSession(steps)], 2.0, 1.0), 1e-12);
    }

    [Fact]
    public void Long_sessions_at_large_alpha_do_not_underflow()
    {
        // 600 answers of probability ≤ 1/2 multiply to below 1e-180 and, at alpha 20, Q(h|A) to below 1e-300:
        // the result must stay finite and equal the sum of per-step logs from a second, plain implementation.
        var model = TinyModels.Random(12, m: 40, teach: 30, test: 10, labels: 2, alpha: 20, lapse: 0.2);
        var random = new SeededRandom(12);
        var steps = new List<RecordedStep>();
        for (var round = 0; round < 20; round++)
        {
            for (var x = 0; x < 30; x++)
            {
                steps.Add(new RecordedStep(x, random.NextInt(2), true));
            }
        }

        var actual = LearnerFit.LogLikelihood(model, [new RecordedSession(steps)], 20.0, 0.2);
        Assert.True(double.IsFinite(actual));
        AssertNear.Relative(PlainLogLikelihood(model, steps, 20.0, 0.2), actual, 1e-10);
    }

    [Fact]
    public void Empty_or_malformed_input_is_refused_clearly()
    {
        var model = TinyModels.Thresholds(4, 3, alpha: 1.0, testItems: 2);
        var empty = Assert.Throws<ArgumentException>(() => LearnerFit.LogLikelihood(model, [], 1.0, 0.1));
        Assert.Contains("At least one recorded session", empty.Message, StringComparison.Ordinal);
        Assert.Throws<ArgumentException>(() => LearnerFit.Fit(model, []));
        Assert.Throws<ArgumentException>(() => LearnerFit.Fit(model, [new RecordedSession([])]));
        Assert.Throws<ArgumentException>(() => LearnerFit.LogLikelihood(model, [new RecordedSession([new RecordedStep(9, 0, false)])], 1.0, 0.1));
        Assert.Throws<ArgumentException>(() => LearnerFit.LogLikelihood(model, [new RecordedSession([new RecordedStep(0, 2, false)])], 1.0, 0.1));
        // Item 4 is in the test pool: never a teaching step (DESIGN 1, pool).
        Assert.Throws<ArgumentException>(() => LearnerFit.LogLikelihood(model, [new RecordedSession([new RecordedStep(4, 0, true)])], 1.0, 0.1));
    }

    /// <summary>A second implementation: the Belief filter's own observe normaliser, step by step in log space.</summary>
    private static double PlainLogLikelihood(ModelVersion model, IReadOnlyList<RecordedStep> steps, double alpha, double lapse)
    {
        var belief = new TeachServe.Core.Learning.Belief(model, ModelVersion.DisagreementFactor(alpha), lapse);
        var k = model.LabelCount;
        var sum = 0.0;
        foreach (var step in steps)
        {
            var normaliser = 0.0;
            for (var h = 0; h < model.HypothesisCount; h++)
            {
                normaliser += belief.Weights[h] * (((1 - lapse) * (model.Predict(h, step.Item) == step.Label ? 1 : 0)) + (lapse / k));
            }

            sum += Math.Log(normaliser);
            if (step.Teaching)
            {
                belief.Teach(step.Item, step.Label);
            }
            else
            {
                belief.Observe(step.Item, step.Label);
            }
        }

        return sum;
    }
}
