using TeachServe.Core.Learning;
using TeachServe.Core.Model;
using TeachServe.Core.Teaching;
using TeachServe.Core.Tests.Support;

namespace TeachServe.Core.Tests.Engine;

public class BeliefTests
{
    [Theory]
    [InlineData(1, 2, 0.1)]
    [InlineData(2, 2, 0.0)]
    [InlineData(3, 3, 0.2)]
    [InlineData(4, 3, 0.05)]
    [InlineData(5, 2, 0.5)]
    public void Filter_equals_brute_force_path_enumeration(int seed, int labels, double lapse)
    {
        var model = TinyModels.Random(seed, m: 5, teach: 4, test: 2, labels, alpha: 1.3, lapse);
        Assert.InRange(model.HypothesisCount, 4, 6);
        var random = new SeededRandom((ulong)(seed * 97));
        var steps = new (int, int, bool)[5];
        for (var s = 0; s < 4; s++)
        {
            steps[s] = (s, random.NextInt(labels), true);
        }

        steps[4] = (4, random.NextInt(labels), false); // a test answer: observe only
        if (lapse == 0)
        {
            // With no lapses an answer must come from some hypothesis, or the path sum is empty; use the target's.
            for (var s = 0; s < steps.Length; s++)
            {
                steps[s].Item2 = model.Predict(model.TargetIndex, steps[s].Item1);
            }
        }

        var belief = new Belief(model, model.Q, lapse);
        foreach (var (item, answer, teach) in steps)
        {
            if (teach)
            {
                belief.Teach(item, answer);
            }
            else
            {
                belief.Observe(item, answer);
            }
        }

        // REFERENCES.md E: brute-force enumerator [derived].
        var (expected, _) = LearnerPaths.Enumerate(model, model.Q, lapse, steps.Select(s => new LearnerPaths.Step(s.Item1, s.Item2, s.Item3)).ToArray());
        for (var h = 0; h < model.HypothesisCount; h++)
        {
            Assert.Equal(expected[h], belief.Weights[h], 12);
        }
    }

    [Fact]
    public void Uninformative_answers_reduce_the_belief_to_the_learner_posterior()
    {
        // DESIGN 2.3: with lapse = 1, β_t = P(·|A_t) whatever the answers.
        var model = TinyModels.Random(11, m: 40, teach: 12, test: 4, labels: 3, alpha: 1.0, lapse: 1.0);
        var belief = new Belief(model, model.Q, lapse: 1.0);
        var random = new SeededRandom(5);
        for (var x = 0; x < 10; x++)
        {
            belief.Teach(x, random.NextInt(3));
            var learner = belief.LearnerWeights.ToArray();
            var total = learner.Sum();
            for (var h = 0; h < model.HypothesisCount; h++)
            {
                Assert.Equal(learner[h] / total, belief.Weights[h], 12);
            }
        }
    }

    [Theory]
    [InlineData(21, 2)]
    [InlineData(22, 4)]
    public void Fast_update_matches_the_reference_implementation(int seed, int labels)
    {
        var model = TinyModels.Random(seed, m: 300, teach: 60, test: 20, labels, alpha: 1.5, lapse: 0.05);
        var belief = new Belief(model, model.Q, model.Learner.Lapse);
        var referenceBelief = model.Prior.ToArray();
        var referenceLearner = model.Prior.ToArray();
        var random = new SeededRandom((ulong)seed);
        for (var x = 0; x < 40; x++)
        {
            var answer = random.NextInt(labels);
            belief.Teach(x, answer);
            ReferenceTeacher.Teach(model, referenceBelief, referenceLearner, model.Q, model.Learner.Lapse, x, answer);
        }

        for (var h = 0; h < model.HypothesisCount; h++)
        {
            Assert.Equal(referenceBelief[h], belief.Weights[h], 10);
        }

        Assert.Equal(1.0, belief.Weights.ToArray().Sum(), 12);
    }

    [Theory]
    [InlineData(31, 2)]
    [InlineData(32, 3)]
    public void Learner_total_is_the_in_order_sum_of_the_learner_weights_to_the_last_bit(int seed, int labels)
    {
        // The adaptive policy reads LearnerTotal where it used to add the learner weights itself, first to last;
        // the same bits mean the same choices. Exact comparison on purpose.
        var model = TinyModels.Random(seed, m: 300, teach: 60, test: 20, labels, alpha: 1.5, lapse: 0.05);
        var belief = new Belief(model, model.Q, model.Learner.Lapse);
        AssertTotal(belief);
        var random = new SeededRandom((ulong)seed);
        for (var x = 0; x < 40; x++)
        {
            if (x % 5 == 4)
            {
                belief.Observe(x, random.NextInt(labels));
            }
            else
            {
                belief.Teach(x, random.NextInt(labels));
            }

            AssertTotal(belief);
        }

        AssertTotal(belief.Clone());
        var copy = new Belief(model, model.Q, model.Learner.Lapse);
        copy.CopyFrom(belief);
        AssertTotal(copy);
        Assert.NotEqual(model.Prior.ToArray().Sum(), copy.LearnerTotal);
        var continued = Belief.Continue(model, model.Q, model.Learner.Lapse, belief.Weights);
        AssertTotal(continued);

        static void AssertTotal(Belief b)
        {
            var total = 0.0;
            foreach (var w in b.LearnerWeights)
            {
                total += w;
            }

            Assert.Equal(BitConverter.DoubleToInt64Bits(total), BitConverter.DoubleToInt64Bits(b.LearnerTotal));
        }
    }

    [Fact]
    public void Confidence_counts_the_mass_of_good_enough_rules()
    {
        var model = TinyModels.Thresholds(4, 3, alpha: 2);
        var belief = new Belief(model, model.Q, 0.1);
        // Uniform prior: θ = 3 has error 0, θ = 2 and 4 have 0.25. C(0.25) = 3/5, C(0.1) = 1/5, Ê = E0 = 0.3.
        Assert.Equal(0.6, belief.Confidence(0.25), 12);
        Assert.Equal(0.2, belief.Confidence(0.1), 12);
        Assert.Equal(0.3, belief.PredictedError(), 12);
    }
}
