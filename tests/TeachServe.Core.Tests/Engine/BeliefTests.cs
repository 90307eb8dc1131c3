using TeachServe.Core.Learning;
using TeachServe.Core.Model;
using TeachServe.Core.Teaching;

namespace TeachServe.Core.Tests.Engine;

public class BeliefTests
{
    /// <summary>
    /// Independent reference: sums the probability of every learner path (h_0, …, h_T) explicitly, with the
    /// switching-learner transition of Singla et al. (ICML 2014) and lapse observations (DESIGN 2.2–2.3); the
    /// filter must give the same marginal of h_T. REFERENCES.md E: brute-force enumerator [derived].
    /// </summary>
    private static double[] EnumeratePaths(ModelVersion model, double q, double lapse, (int Item, int Answer, bool Teach)[] steps)
    {
        var m = model.HypothesisCount;
        var k = model.LabelCount;
        var prior = model.Prior.ToArray();
        var marginal = new double[m];

        // Learner posterior P(·|A_t) after each prefix of teaching steps, straight from the definition.
        double[] PosteriorAfter(int stepIndex)
        {
            var w = new double[m];
            for (var h = 0; h < m; h++)
            {
                w[h] = prior[h];
                for (var s = 0; s <= stepIndex; s++)
                {
                    if (steps[s].Teach && model.Predict(h, steps[s].Item) != model.TrueLabel(steps[s].Item))
                    {
                        w[h] *= q;
                    }
                }
            }

            var total = w.Sum();
            return w.Select(v => v / total).ToArray();
        }

        var posteriors = Enumerable.Range(0, steps.Length).Select(PosteriorAfter).ToArray();
        var path = new int[steps.Length + 1];

        void Walk(int depth, double probability)
        {
            if (probability == 0)
            {
                return;
            }

            if (depth == steps.Length)
            {
                marginal[path[depth]] += probability;
                return;
            }

            var (item, answer, teach) = steps[depth];
            var held = path[depth];
            var predicted = model.Predict(held, item);
            var o = ((1 - lapse) * (predicted == answer ? 1 : 0)) + (lapse / k);
            var p = probability * o;
            for (var next = 0; next < m; next++)
            {
                double transition;
                if (!teach || predicted == model.TrueLabel(item))
                {
                    transition = next == held ? 1 : 0;
                }
                else
                {
                    transition = ((1 - q) * posteriors[depth][next]) + (next == held ? q : 0);
                }

                path[depth + 1] = next;
                Walk(depth + 1, p * transition);
            }
        }

        for (var h0 = 0; h0 < m; h0++)
        {
            path[0] = h0;
            Walk(0, prior[h0]);
        }

        var z = marginal.Sum();
        return marginal.Select(v => v / z).ToArray();
    }

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

        var expected = EnumeratePaths(model, model.Q, lapse, steps);
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
