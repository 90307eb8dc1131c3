using TeachServe.Core.Learning;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Teaching;

namespace TeachServe.Core.Tests.Engine;

public class ItemTypicalityTests
{
    [Fact]
    public void Typicality_is_the_prior_share_of_close_rules_that_label_an_item_right()
    {
        // Four items, truth 0 0 1 1; rules: the target, one at error 0.25 wrong on item 1, one at 0.5 wrong on items 1
        // and 2, and one at 0.75. Priors 1, 2, 3, 4.
        var model = ModelCompiler.FromPredictions(
            ["a", "b"],
            ["i0", "i1", "i2", "i3"],
            4,
            [0, 0, 1, 1],
            [
                (new byte[] { 0, 0, 1, 1 }, 1.0),
                (new byte[] { 0, 1, 1, 1 }, 2.0),
                (new byte[] { 0, 1, 0, 1 }, 3.0),
                (new byte[] { 1, 1, 0, 1 }, 4.0),
            ],
            new LearnerSettings { Alpha = 1, Lapse = 0 });
        // Within 0.3: the target and the 0.25 rule (mass 3); the 0.25 rule mislabels item 1.
        AssertClose([1.0, 1.0 / 3, 1.0, 1.0], ItemTypicality.Of(model, 0.3));
        // Within 0.5: mass 6; item 1 is right only under the target, item 2 under the target and the 0.25 rule.
        AssertClose([1.0, 1.0 / 6, 0.5, 1.0], ItemTypicality.Of(model, 0.5));
        // Only the target within 0.1: nothing is atypical, so the weights change no choice.
        Assert.All(ItemTypicality.Of(model, 0.1), t => Assert.Equal(1.0, t));
        AssertClose([1.0, 1.0 / 9, 1.0, 1.0], ItemTypicality.Weights(model, 0.3, 2)!);
        Assert.Null(ItemTypicality.Weights(model, 0.3, 0));
    }

    [Theory]
    [InlineData(51, 2, 2.0)]
    [InlineData(52, 3, 1.0)]
    public void Weighted_adaptive_choice_matches_the_reference_implementation(int seed, int labels, double power)
    {
        var model = TinyModels.Random(seed, m: 400, teach: 70, test: 20, labels, alpha: 1.2, lapse: 0.05);
        var weights = ItemTypicality.Weights(model, 0.3, power)!;
        Assert.Contains(weights, w => w < 0.9);
        var policy = new TeachingPolicy(model, PolicyNames.Adaptive, 2.0, weights);
        var belief = new Belief(model, model.Q, model.Learner.Lapse);
        var refBelief = model.Prior.ToArray();
        var refLearner = model.Prior.ToArray();
        var shown = new bool[model.TeachCount];
        var random = new SeededRandom((ulong)seed);
        var differsFromUnweighted = false;
        for (var step = 0; step < 20; step++)
        {
            var fast = policy.ChooseNext(belief, shown, step, random);
            var reference = ReferenceTeacher.ChooseAdaptive(model, refBelief, refLearner, model.Q, 2.0, shown, weights);
            Assert.Equal(reference, fast);
            differsFromUnweighted |= reference != ReferenceTeacher.ChooseAdaptive(model, refBelief, refLearner, model.Q, 2.0, shown);
            var answer = random.NextInt(labels);
            shown[reference] = true;
            belief.Teach(reference, answer);
            ReferenceTeacher.Teach(model, refBelief, refLearner, model.Q, model.Learner.Lapse, reference, answer);
        }

        Assert.True(differsFromUnweighted, "the weights never changed a choice, so the test compared nothing new");
    }

    [Fact]
    public void A_typicality_weight_of_zero_teaches_exactly_as_before_and_a_positive_one_puts_exceptions_later()
    {
        var model = TinyModels.Random(61, m: 400, teach: 70, test: 30, labels: 2, alpha: 1.2, lapse: 0.05);
        var typicality = ItemTypicality.Of(model, 0.3);
        IReadOnlyList<int> Taught(double weight)
        {
            var gate = new GateSettings { MaxTeachingItems = 12, Confidence = 0.999, TargetError = 0.01, Retakes = 0, MasteryStreak = 0, TypicalityWeight = weight, Test = new TestSettings { Delta = 0.58 } };
            var run = SessionRun.Start(model, new SessionOptions { Policy = PolicyNames.Adaptive, Gate = gate, Seed = 3 });
            while (run.Phase == SessionPhase.Teaching)
            {
                run.Answer(model.TrueLabel(run.CurrentItem));
            }

            return run.Evidence().TaughtItems;
        }

        var unweighted = Taught(0);
        var weighted = Taught(4);
        Assert.Equal(12, unweighted.Count);
        Assert.NotEqual(unweighted, weighted);
        Assert.True(weighted.Average(x => typicality[x]) > unweighted.Average(x => typicality[x]),
            $"typicality of taught items: weighted {weighted.Average(x => typicality[x]):F3}, unweighted {unweighted.Average(x => typicality[x]):F3}");
    }

    private static void AssertClose(double[] expected, double[] actual)
    {
        Assert.Equal(expected.Length, actual.Length);
        for (var i = 0; i < expected.Length; i++)
        {
            Assert.Equal(expected[i], actual[i], 12);
        }
    }
}
