using TeachServe.Core.Learning;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Teaching;

namespace TeachServe.Core.Tests.Engine;

public class PolicyTests
{
    [Theory]
    [InlineData(31, 2, 0.0)]
    [InlineData(32, 2, 1.0)]
    [InlineData(33, 3, 1.0)]
    [InlineData(34, 5, 2.5)]
    public void Adaptive_choice_matches_the_reference_implementation(int seed, int labels, double blend)
    {
        var model = TinyModels.Random(seed, m: 500, teach: 80, test: 20, labels, alpha: 1.2, lapse: 0.05);
        var policy = new TeachingPolicy(model, PolicyNames.Adaptive, blend);
        var belief = new Belief(model, model.Q, model.Learner.Lapse);
        var refBelief = model.Prior.ToArray();
        var refLearner = model.Prior.ToArray();
        var shown = new bool[model.TeachCount];
        var random = new SeededRandom((ulong)seed);
        var agreements = 0;
        for (var step = 0; step < 25; step++)
        {
            var fast = policy.ChooseNext(belief, shown, step, random);
            var reference = ReferenceTeacher.ChooseAdaptive(model, refBelief, refLearner, model.Q, blend, shown);
            if (fast == reference)
            {
                agreements++;
            }
            else
            {
                // Floats in the kernel may only swap near-ties: the reference gains of both picks must agree closely.
                Assert.Fail($"step {step}: fast chose {fast}, reference chose {reference}");
            }

            var answer = random.NextInt(labels);
            shown[reference] = true;
            belief.Teach(reference, answer);
            ReferenceTeacher.Teach(model, refBelief, refLearner, model.Q, model.Learner.Lapse, reference, answer);
        }

        Assert.Equal(25, agreements);
    }

    /// <summary>R(A) = Σ_h P0(h)·err(h)·(1 − Π_{x∈A} ℓ(h,x)), the surrogate of Singla et al. (ICML 2014).</summary>
    [Theory]
    [InlineData(PolicyNames.Adaptive)]
    [InlineData(PolicyNames.StochasticGreedy)]
    public void Sessions_interleaved_on_one_thread_choose_as_they_do_alone(string policyName)
    {
        // The policies' float vectors live per thread, not per session: a session must not see another's values,
        // including a larger model's leftovers in the padding of a smaller one (700 and 130 hypotheses).
        var models = new[]
        {
            TinyModels.Random(41, m: 700, teach: 60, test: 10, labels: 2, alpha: 1.2, lapse: 0.05),
            TinyModels.Random(42, m: 130, teach: 40, test: 10, labels: 3, alpha: 1.2, lapse: 0.05),
        };
        List<int>[] Run(bool interleaved)
        {
            var sessions = models.Select((m, i) => (Model: m, Policy: new TeachingPolicy(m, policyName, 1.0),
                Belief: new Belief(m, m.Q * 0.5, m.Learner.Lapse), Shown: new bool[m.TeachCount], Random: new SeededRandom((ulong)(7 + i)),
                Chosen: new List<int>())).ToArray();
            void Step(int i, int step)
            {
                var s = sessions[i];
                var item = s.Policy.ChooseNext(s.Belief, s.Shown, step, s.Random);
                s.Chosen.Add(item);
                s.Shown[item] = true;
                s.Belief.Teach(item, s.Random.NextInt(s.Model.LabelCount));
            }

            for (var step = 0; step < 20; step++)
            {
                if (interleaved)
                {
                    Step(0, step);
                    Step(1, step);
                }
            }

            if (!interleaved)
            {
                for (var i = 0; i < sessions.Length; i++)
                {
                    for (var step = 0; step < 20; step++)
                    {
                        Step(i, step);
                    }
                }
            }

            return sessions.Select(s => s.Chosen).ToArray();
        }

        var alone = Run(interleaved: false);
        var together = Run(interleaved: true);
        Assert.Equal(alone[0], together[0]);
        Assert.Equal(alone[1], together[1]);
        Assert.Equal(20, alone[1].Distinct().Count());
    }

    private static double Surrogate(ModelVersion model, IEnumerable<int> set)
    {
        var learner = model.Prior.ToArray();
        foreach (var x in set)
        {
            TeachingOrders.ApplyShown(model, learner, x, model.Q);
        }

        return Enumerable.Range(0, model.HypothesisCount).Sum(h => model.Error[h] * (model.Prior[h] - learner[h]));
    }

    private static IEnumerable<int[]> Subsets(int n, int size) =>
        size == 0 ? [[]] : Enumerable.Range(0, n).SelectMany(first => Subsets(n, size - 1).Where(rest => rest.All(r => r > first)).Select(rest => rest.Prepend(first).ToArray()));

    [Theory]
    [InlineData(41)]
    [InlineData(42)]
    [InlineData(43)]
    [InlineData(44)]
    [InlineData(45)]
    [InlineData(46)]
    public void Greedy_reaches_one_minus_one_over_e_of_the_optimum(int seed)
    {
        // Nemhauser, Wolsey & Fisher, Math. Programming 14, 1978 [pub, REFERENCES.md A]: greedy on a monotone
        // submodular function under a budget k gets ≥ (1 − 1/e)·optimum. Optimum by brute force over all k-subsets.
        var model = TinyModels.Random(seed, m: 30, teach: 9, test: 1, labels: 2, alpha: 0.8, lapse: 0);
        for (var k = 1; k <= 4; k++)
        {
            var greedy = TeachingOrders.StochasticGreedy(model, model.Q, k);
            var optimum = Subsets(model.TeachCount, k).Max(s => Surrogate(model, s));
            Assert.True(Surrogate(model, greedy) >= ((1 - (1 / Math.E)) * optimum) - 1e-12, $"k={k}");
            Assert.True(Surrogate(model, greedy) <= optimum + 1e-12);
        }
    }

    [Theory]
    [InlineData(51)]
    [InlineData(52)]
    [InlineData(53)]
    public void Surrogate_is_monotone_submodular_and_bounds_the_learner_error(int seed)
    {
        // Singla et al., ICML 2014 [via REFERENCES.md A]: R is monotone submodular and E(A) ≤ (E0 − R(A))/P0(h*).
        var model = TinyModels.Random(seed, m: 60, teach: 10, test: 2, labels: 2, alpha: 1.0, lapse: 0);
        var random = new SeededRandom((ulong)seed);
        var e0 = model.Summary.PriorExpectedError;
        var targetPrior = model.Prior[model.TargetIndex];
        for (var trial = 0; trial < 50; trial++)
        {
            var b = Enumerable.Range(0, model.TeachCount).Where(_ => random.NextDouble() < 0.5).ToArray();
            var a = b.Where(_ => random.NextDouble() < 0.5).ToArray();
            var x = random.NextInt(model.TeachCount);
            var gainA = Surrogate(model, a.Append(x)) - Surrogate(model, a);
            var gainB = Surrogate(model, b.Append(x)) - Surrogate(model, b);
            Assert.True(gainA >= -1e-12, "monotone");
            Assert.True(gainA >= gainB - 1e-12, "submodular");

            var learner = model.Prior.ToArray();
            foreach (var item in a)
            {
                TeachingOrders.ApplyShown(model, learner, item, model.Q);
            }

            var expected = Enumerable.Range(0, model.HypothesisCount).Sum(h => learner[h] * model.Error[h]) / learner.Sum();
            Assert.True(expected <= ((e0 - Surrogate(model, a)) / targetPrior) + 1e-12);
        }
    }

    [Fact]
    public void Easy_first_interleaves_classes_and_starts_with_the_easiest()
    {
        var model = TinyModels.Random(61, m: 100, teach: 30, test: 5, labels: 3, alpha: 1, lapse: 0);
        var order = model.EasyFirstOrder;
        Assert.Equal(model.TeachCount, order.Distinct().Count());
        var ease = Enumerable.Range(0, model.TeachCount).Select(x => Enumerable.Range(0, model.HypothesisCount).Where(h => !model.Mistake(h, x)).Sum(h => model.Prior[h])).ToArray();
        Assert.Equal(ease.Max(), ease[order[0]], 6);
        var firstRound = order.Take(3).Select(model.TrueLabel).ToHashSet();
        Assert.Equal(3, firstRound.Count);
    }

    [Fact]
    public void Random_policy_is_seeded_and_never_repeats()
    {
        var model = TinyModels.Random(62, m: 50, teach: 20, test: 5, labels: 2, alpha: 1, lapse: 0);
        int[] Draw(ulong seed)
        {
            var policy = new TeachingPolicy(model, PolicyNames.Random, 0);
            var belief = new Belief(model, model.Q, 0.1);
            var shown = new bool[model.TeachCount];
            var random = new SeededRandom(seed);
            var picks = new List<int>();
            for (var t = 0; t < model.TeachCount; t++)
            {
                var x = policy.ChooseNext(belief, shown, t, random);
                shown[x] = true;
                picks.Add(x);
            }

            return [.. picks];
        }

        Assert.Equal(Draw(7), Draw(7));
        Assert.NotEqual(Draw(7), Draw(8));
        Assert.Equal(model.TeachCount, Draw(7).Distinct().Count());
    }
}
