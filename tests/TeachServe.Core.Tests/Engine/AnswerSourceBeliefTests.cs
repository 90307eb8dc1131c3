using TeachServe.Core.Learning;
using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;

namespace TeachServe.Core.Tests.Engine;

public class AnswerSourceBeliefTests
{
    [Theory]
    [InlineData(1, 2, 0.1, 0.02, 0.05, -1)]
    [InlineData(2, 3, 0.35, 0.2, 0.3, -1)]
    [InlineData(3, 4, 1.0, 0.1, 0.4, -1)]
    [InlineData(4, 2, 0.0, 0.1, 0.4, -1)]
    [InlineData(5, 3, 0.5, 0.2, 0.3, 2)]
    public void Posterior_equals_brute_force_over_grid_paths(int seed, int labels, double drift, double guessPrior, double unexplainedPrior, int zeroAt)
    {
        // Predictive probabilities from a real belief; teaching (items 0..3) and test answers (items 4, 5) interleaved.
        var model = TinyModels.Random(seed, m: 5, teach: 4, test: 2, labels, alpha: 1.3, lapse: 0.1);
        var belief = new Belief(model, model.Q, 0.1);
        var options = new AnswerSourceOptions { GuessPrior = guessPrior, UnexplainedPrior = unexplainedPrior, Drift = drift, GridSize = 4 };
        var sources = new AnswerSourceBelief(labels, 0.1, options);
        var random = new SeededRandom(SeededRandom.Derive((ulong)seed, 1));
        int[] items = [0, 4, 1, 2, 5, 3];
        var steps = new Step[items.Length];
        for (var t = 0; t < items.Length; t++)
        {
            var item = items[t];
            // Random answers, but one right and one wrong among them so that both likelihoods of the grid are used.
            var truth = model.TrueLabel(item);
            var answer = t == 0 ? truth : t == 1 ? (truth + 1) % labels : random.NextInt(labels);
            var teach = model.IsTeachItem(item);
            var predictive = teach ? belief.Teach(item, answer) : belief.Observe(item, answer);
            if (t == zeroAt)
            {
                predictive = 0.0;
            }

            steps[t] = new Step(predictive, answer == model.TrueLabel(item), teach);
            if (teach)
            {
                sources.Teach(predictive, steps[t].Correct);
            }
            else
            {
                sources.Test(predictive, steps[t].Correct);
            }
        }

        var expected = BruteForce(labels, options, steps);
        Assert.Equal(expected[0], sources.ModelWeight, 12);
        Assert.Equal(expected[1], sources.GuessingWeight, 12);
        for (var j = 0; j < 4; j++)
        {
            Assert.Equal(expected[2 + j], sources.GridWeights[j], 12);
        }

        Assert.Equal(expected.Skip(2).Sum(), sources.UnexplainedWeight, 12);
        if (zeroAt >= 0)
        {
            Assert.Equal(0.0, sources.ModelWeight);
        }
    }

    [Fact]
    public void Without_drift_the_grid_posterior_is_the_binomial_likelihood_on_the_grid()
    {
        // Closed form [derived]: with no drift p never moves, so P(unexplained, p_j | answers) ∝
        // (u/J)·(1−p_j)^r·(p_j/(K−1))^w, beside (1−g−u)·Π predictive for the model and g·K^−n for guessing.
        const int k = 3;
        const double g = 0.02, u = 0.05;
        var options = new AnswerSourceOptions { Drift = 0.0 };
        var sources = new AnswerSourceBelief(k, 0.05, options);
        var random = new SeededRandom(31);
        double model = 1 - g - u;
        int right = 0, wrong = 0;
        for (var t = 0; t < 30; t++)
        {
            var predictive = 0.1 + (0.8 * random.NextDouble());
            var correct = random.NextDouble() < 0.7;
            model *= predictive;
            right += correct ? 1 : 0;
            wrong += correct ? 0 : 1;
            if (t % 3 == 2)
            {
                sources.Test(predictive, correct);
            }
            else
            {
                sources.Teach(predictive, correct);
            }
        }

        var grid = new double[options.GridSize];
        for (var j = 0; j < grid.Length; j++)
        {
            var p = (j + 0.5) / grid.Length * (k - 1.0) / k;
            Assert.Equal(p, sources.GridAnswerErrors[j], 15);
            grid[j] = u / grid.Length * Math.Pow(1 - p, right) * Math.Pow(p / (k - 1), wrong);
        }

        var guess = g * Math.Pow(1.0 / k, 30);
        var total = model + guess + grid.Sum();
        Assert.Equal(model / total, sources.ModelWeight, 12);
        Assert.Equal(guess / total, sources.GuessingWeight, 12);
        for (var j = 0; j < grid.Length; j++)
        {
            Assert.Equal(grid[j] / total, sources.GridWeights[j], 12);
        }
    }

    [Theory]
    [InlineData(2)]
    [InlineData(3)]
    public void Random_answers_take_the_mass_from_the_model(int labels)
    {
        var chanceWrong = 0;
        var belowChance = 0;
        for (var seed = 1; seed <= 16; seed++)
        {
            var model = TinyModels.Random(seed, m: 60, teach: 40, test: 10, labels, alpha: 1.5, lapse: 0.05);
            var belief = new Belief(model, model.Q, 0.05);
            var sources = new AnswerSourceBelief(labels, 0.05, new AnswerSourceOptions());
            var random = new SeededRandom(SeededRandom.Derive((ulong)seed, 7));
            var wrong = 0;
            for (var x = 0; x < 40; x++)
            {
                var answer = random.NextInt(labels);
                var correct = answer == model.TrueLabel(x);
                wrong += correct ? 0 : 1;
                sources.Teach(belief.Teach(x, answer), correct);
            }

            Assert.True(sources.ModelWeight < 1e-3, $"seed {seed}: model weight {sources.ModelWeight}");
            var within = sources.ProbabilityWithin(belief.Confidence(0.1), 0.1);

            // Guessing and the grid's states near chance describe such answers almost equally well; guessing, with
            // no error rate to fit, wins clearly once the answers are wrong more often than chance predicts.
            // Fewer wrong answers than that do look like a poor rule, and the grid may then keep the larger share;
            // with drift, a recent run of right answers also leaves some mass on good error rates (up to 0.12 here),
            // which test answers, where nothing drifts, would have to confirm.
            if (wrong * labels > 40 * (labels - 1))
            {
                chanceWrong++;
                Assert.True(sources.GuessingWeight > 0.9, $"seed {seed}: {wrong} wrong, guessing {sources.GuessingWeight}");
                Assert.True(within < 0.01, $"seed {seed}: within {within}");
            }
            else
            {
                belowChance++;
                Assert.True(sources.GuessingWeight + sources.UnexplainedWeight > 0.999, $"seed {seed}");
                Assert.True(within < 0.15, $"seed {seed}: within {within}");
            }
        }

        Assert.True(chanceWrong >= 3 && belowChance >= 3, $"{chanceWrong} sessions above chance, {belowChance} below");
    }

    [Theory]
    [InlineData(2, 11)]
    [InlineData(3, 12)]
    [InlineData(4, 13)]
    public void Answers_from_the_assumed_learner_keep_the_model(int labels, int seed)
    {
        var model = TinyModels.Random(seed, m: 60, teach: 40, test: 20, labels, alpha: 1.5, lapse: 0.05);
        var belief = new Belief(model, model.Q, 0.05);
        var sources = new AnswerSourceBelief(labels, 0.05, new AnswerSourceOptions());
        var learner = new SimulatedLearner(model, LearnerVariant.Assumed, 1.5, 0.05, 0.1, new SeededRandom(SeededRandom.Derive((ulong)seed, 3)));
        for (var x = 0; x < 40; x++)
        {
            var answer = learner.Answer(x);
            learner.SeeFeedback(x);
            sources.Teach(belief.Teach(x, answer), answer == model.TrueLabel(x));
        }

        for (var x = 40; x < 60; x++)
        {
            var answer = learner.Answer(x);
            sources.Test(belief.Observe(x, answer), answer == model.TrueLabel(x));
        }

        Assert.True(sources.ModelWeight > 0.95, $"model weight {sources.ModelWeight}");
    }

    [Theory]
    [InlineData(21)]
    [InlineData(22)]
    [InlineData(23)]
    public void Answers_wrong_more_often_than_the_model_allows_move_mass_to_the_unexplained_states(int seed)
    {
        // Hypotheses are the target and rules wrong on 30-60 % of items; the annotator's rule is wrong on exactly
        // every tenth item, which none of them gives, and the model's lapse (0.02) explains only 1 % wrong answers.
        const double lapse = 0.02;
        var random = new SeededRandom((ulong)seed);
        const int n = 80;
        var truth = Enumerable.Range(0, n).Select(_ => random.NextInt(2)).ToArray();
        var hypotheses = Enumerable.Range(0, 12).Select(_ =>
        {
            var wrongRate = 0.3 + (0.3 * random.NextDouble());
            return (truth.Select(y => (byte)(random.NextDouble() < wrongRate ? 1 - y : y)).ToArray(), 1.0);
        });
        var model = ModelCompiler.FromPredictions(
            ["c0", "c1"], Enumerable.Range(0, n).Select(i => $"i{i}").ToArray(), 20, truth, hypotheses, new LearnerSettings { Alpha = 1.5, Lapse = lapse });
        var belief = new Belief(model, model.Q, lapse);
        var sources = new AnswerSourceBelief(2, lapse, new AnswerSourceOptions());
        for (var x = 0; x < n; x++)
        {
            var correct = x % 10 != 9;
            var answer = correct ? truth[x] : 1 - truth[x];
            if (model.IsTeachItem(x))
            {
                sources.Teach(belief.Teach(x, answer), correct);
            }
            else
            {
                sources.Test(belief.Observe(x, answer), correct);
            }
        }

        // Rule error of a 10 % answer-error rate: (0.1 − 0.02·½)/0.98 = 0.0918 [derived, DESIGN 2.2 lapse model].
        var ruleError = (0.1 - (lapse / 2)) / (1 - lapse);
        Assert.True(belief.Confidence(0.05) > 0.9, "the model alone is confident of a rule error ≤ 0.05");
        Assert.True(sources.UnexplainedWeight > 0.9, $"unexplained {sources.UnexplainedWeight}");
        Assert.True(sources.ProbabilityWithin(belief.Confidence(0.05), 0.05) < 0.1);
        Assert.True(sources.ProbabilityWithin(belief.Confidence(0.15), 0.15) > 0.75);
        AssertNear(ruleError, sources.PredictedRuleError(belief.PredictedError()), 0.03);
        AssertWithinMatchesGrid(sources, belief.Confidence(0.05), 0.05, 2, lapse);
    }

    [Fact]
    public void A_model_that_gives_right_answers_little_probability_loses_to_the_grid_which_finds_their_error_rate()
    {
        // The brief's case: the model's predictive probability of each right answer is 0.05 while 90 % are right.
        const double lapse = 0.1;
        var sources = new AnswerSourceBelief(2, lapse, new AnswerSourceOptions());
        for (var t = 0; t < 80; t++)
        {
            var correct = t % 10 != 9;
            var predictive = correct ? 0.05 : 0.95;
            if (t < 20)
            {
                sources.Teach(predictive, correct);
            }
            else
            {
                sources.Test(predictive, correct);
            }
        }

        Assert.True(sources.ModelWeight < 1e-6);
        Assert.True(sources.UnexplainedWeight > 0.99);

        // Rule error (0.1 − 0.1·½)/0.9 = 0.0556 [derived]; the model's own rules have error 0.9 and confidence 0.
        Assert.True(sources.ProbabilityWithin(0.0, 0.15) > 0.85);
        Assert.True(sources.ProbabilityWithin(0.0, 0.01) < 0.05);
        AssertNear(0.05 / 0.9, sources.PredictedRuleError(0.9), 0.03);
        AssertWithinMatchesGrid(sources, 0.0, 0.1, 2, lapse);
    }

    [Fact]
    public void Probability_within_and_predicted_rule_error_at_the_prior_are_hand_worked()
    {
        // K = 2, lapse 0.1, J = 4 [derived]: p_j = 0.0625, 0.1875, 0.3125, 0.4375; e_j = (p_j − 0.05)/0.9 =
        // 0.013889, 0.152778, 0.291667, 0.430556. Priors: model 0.93, guessing 0.02, each grid state 0.0125.
        var sources = new AnswerSourceBelief(2, 0.1, new AnswerSourceOptions { GridSize = 4 });
        double[] rule = [0.0125 / 0.9, 0.1375 / 0.9, 0.2625 / 0.9, 0.3875 / 0.9];
        for (var j = 0; j < 4; j++)
        {
            Assert.Equal(rule[j], sources.GridRuleErrors[j], 15);
        }

        Assert.Equal(0.93, sources.ModelWeight, 15);
        Assert.Equal(0.02, sources.GuessingWeight, 15);
        Assert.Equal(0.05, sources.UnexplainedWeight, 15);

        // 0.93·0.6 + 2·0.0125 = 0.583; with target 0.5 guessing counts too: 0.93·0.6 + 0.05 + 0.02 = 0.628.
        Assert.Equal(0.583, sources.ProbabilityWithin(0.6, 0.2), 12);
        Assert.Equal(0.628, sources.ProbabilityWithin(0.6, 0.5), 12);

        // 0.93·0.3 + 0.02·0.5 + 0.0125·(0.888889) = 0.300111.
        Assert.Equal(0.279 + 0.01 + (0.0125 * rule.Sum()), sources.PredictedRuleError(0.3), 12);
        Assert.Equal(0.3001111111111, sources.PredictedRuleError(0.3), 12);
    }

    [Fact]
    public void Rule_error_is_clamped_and_takes_its_limit_at_lapse_one()
    {
        // p = (1 − lapse)·e + lapse·(K−1)/K (DESIGN 2.2) inverted [derived].
        Assert.Equal(7.0 / 27, AnswerSourceBelief.RuleError(0.3, 3, 0.1), 12); // (0.3 − 0.1·⅔)/0.9 = 7/27
        Assert.Equal(0.0, AnswerSourceBelief.RuleError(0.01, 2, 0.1));
        Assert.Equal(1.0, AnswerSourceBelief.RuleError(1.0, 2, 0.5));
        Assert.Equal(0.0, AnswerSourceBelief.RuleError(0.4, 2, 1.0));
        Assert.Equal(1.0, AnswerSourceBelief.RuleError(0.6, 2, 1.0));
    }

    [Fact]
    public void Ten_thousand_answers_stay_finite_and_normalised()
    {
        var sources = new AnswerSourceBelief(3, 0.05, new AnswerSourceOptions());
        var random = new SeededRandom(77);
        for (var t = 0; t < 10_000; t++)
        {
            var roll = random.NextDouble();
            var predictive = roll < 0.001 ? 0.0 : roll < 0.01 ? 1.0 : random.NextDouble();
            var correct = random.NextDouble() < 0.8;
            if (random.NextDouble() < 0.5)
            {
                sources.Teach(predictive, correct);
            }
            else
            {
                sources.Test(predictive, correct);
            }

            var sum = sources.ModelWeight + sources.GuessingWeight + sources.UnexplainedWeight;
            Assert.True(Math.Abs(sum - 1) < 1e-9, $"step {t}: sum {sum}");
            Assert.True(double.IsFinite(sources.ProbabilityWithin(0.5, 0.1)));
            Assert.InRange(sources.PredictedRuleError(0.2), 0.0, 1.0);
        }

        Assert.Equal(0.0, sources.ModelWeight); // an answer the model gave probability 0 rules it out for good
    }

    [Fact]
    public void A_weight_far_below_the_smallest_double_recovers()
    {
        // 2,000 answers the model predicts with 0.999 put guessing e^−1384 behind, below any double; 300 answers it
        // gives 0.001 bring it back. A filter that renormalised plain probabilities would keep it at 0 for good.
        var sources = new AnswerSourceBelief(2, 0.05, new AnswerSourceOptions { UnexplainedPrior = 0.0 });
        for (var t = 0; t < 2000; t++)
        {
            sources.Teach(0.999, true);
        }

        Assert.Equal(0.0, sources.GuessingWeight);
        for (var t = 0; t < 300; t++)
        {
            sources.Test(0.001, t % 2 == 0);
        }

        Assert.True(sources.GuessingWeight > 0.999, $"guessing {sources.GuessingWeight}");
        Assert.Equal(0.0, sources.UnexplainedWeight);
    }

    [Fact]
    public void A_model_predictive_of_zero_rules_the_model_out_and_the_others_carry_on()
    {
        var sources = new AnswerSourceBelief(2, 0.1, new AnswerSourceOptions { GridSize = 4, Drift = 0.0 });
        sources.Teach(0.0, true);
        Assert.Equal(0.0, sources.ModelWeight);

        // Guessing 0.02·½ against the grid's 0.0125·Σ(1 − p_j) = 0.0125·(4 − 1) [derived].
        Assert.Equal(0.01 / (0.01 + (0.0125 * 3.0)), sources.GuessingWeight, 12);
        sources.Test(0.7, false);
        Assert.Equal(0.0, sources.ModelWeight);
        Assert.Equal(1.0, sources.GuessingWeight + sources.UnexplainedWeight, 12);
    }

    [Fact]
    public void An_answer_no_source_can_give_leaves_the_weights_unchanged()
    {
        var sources = new AnswerSourceBelief(2, 0.1, new AnswerSourceOptions { GuessPrior = 0.0, UnexplainedPrior = 0.0 });
        sources.Teach(0.0, true);
        Assert.Equal(1.0, sources.ModelWeight);
        sources.Test(0.3, false);
        Assert.Equal(1.0, sources.ModelWeight);
        Assert.Equal(0.0, sources.GuessingWeight);
    }

    [Fact]
    public void Clone_is_independent_and_copy_restores_the_state()
    {
        var sources = new AnswerSourceBelief(3, 0.05, new AnswerSourceOptions());
        sources.Teach(0.4, true);
        var clone = sources.Clone();
        clone.Teach(0.01, false);
        Assert.NotEqual(sources.ModelWeight, clone.ModelWeight);
        var before = sources.ModelWeight;
        sources.Test(0.9, true);
        clone.CopyFrom(sources);
        Assert.Equal(sources.ModelWeight, clone.ModelWeight);
        Assert.Equal(sources.GridWeights.ToArray(), clone.GridWeights.ToArray());
        Assert.NotEqual(before, clone.ModelWeight);
        var other = new AnswerSourceBelief(3, 0.05, new AnswerSourceOptions { Drift = 0.2 });
        Assert.Throws<ArgumentException>(() => other.CopyFrom(sources));
    }

    [Fact]
    public void Steps_allocate_nothing()
    {
        var sources = new AnswerSourceBelief(3, 0.05, new AnswerSourceOptions());
        sources.Teach(0.5, true);
        sources.Test(0.5, false);
        var before = GC.GetAllocatedBytesForCurrentThread();
        for (var t = 0; t < 1000; t++)
        {
            sources.Teach(0.6, t % 3 != 0);
            sources.Test(0.4, t % 2 == 0);
        }

        Assert.Equal(0, GC.GetAllocatedBytesForCurrentThread() - before);
    }

    [Fact]
    public void Arguments_out_of_range_throw()
    {
        var ok = new AnswerSourceOptions();
        AssertParam("labelCount", () => new AnswerSourceBelief(1, 0.1, ok));
        AssertParam("lapse", () => new AnswerSourceBelief(2, -0.1, ok));
        AssertParam("lapse", () => new AnswerSourceBelief(2, 1.1, ok));
        AssertParam("lapse", () => new AnswerSourceBelief(2, double.NaN, ok));
        Assert.Throws<ArgumentNullException>(() => new AnswerSourceBelief(2, 0.1, null!));
        AssertParam("GuessPrior", () => new AnswerSourceBelief(2, 0.1, ok with { GuessPrior = -0.01 }));
        AssertParam("GuessPrior", () => new AnswerSourceBelief(2, 0.1, ok with { GuessPrior = double.NaN }));
        AssertParam("UnexplainedPrior", () => new AnswerSourceBelief(2, 0.1, ok with { UnexplainedPrior = 1.5 }));
        AssertParam("UnexplainedPrior", () => new AnswerSourceBelief(2, 0.1, ok with { GuessPrior = 0.6, UnexplainedPrior = 0.5 }));
        AssertParam("Drift", () => new AnswerSourceBelief(2, 0.1, ok with { Drift = 1.01 }));
        AssertParam("Drift", () => new AnswerSourceBelief(2, 0.1, ok with { Drift = double.NaN }));
        AssertParam("GridSize", () => new AnswerSourceBelief(2, 0.1, ok with { GridSize = 0 }));

        var sources = new AnswerSourceBelief(2, 0.1, ok);
        AssertParam("modelPredictive", () => sources.Teach(-0.1, true));
        AssertParam("modelPredictive", () => sources.Test(1.5, true));
        AssertParam("modelPredictive", () => sources.Teach(double.NaN, false));
        AssertParam("modelConfidence", () => sources.ProbabilityWithin(1.2, 0.1));
        AssertParam("targetRuleError", () => sources.ProbabilityWithin(0.5, double.NaN));
        AssertParam("modelPredictedError", () => sources.PredictedRuleError(-0.5));

        // A failed call leaves the state as it was.
        Assert.Equal(1 - 0.02 - 0.05, sources.ModelWeight, 15);
    }

    private sealed record Step(double Predictive, bool Correct, bool Teach);

    /// <summary>
    /// Independent reference: sums every path of grid states s_1..s_{n+1} (s_t emits answer t; the step after a
    /// teaching answer redraws with probability d, after a test answer keeps the state) in plain probabilities.
    /// Returns [model, guessing, P(unexplained, s_{n+1} = j)...], normalised.
    /// </summary>
    private static double[] BruteForce(int k, AnswerSourceOptions options, Step[] steps)
    {
        var j = options.GridSize;
        var d = options.Drift;
        var p = Enumerable.Range(0, j).Select(s => (s + 0.5) / j * (k - 1.0) / k).ToArray();
        var n = steps.Length;
        var result = new double[2 + j];
        result[0] = 1 - options.GuessPrior - options.UnexplainedPrior;
        foreach (var step in steps)
        {
            result[0] *= step.Predictive;
        }

        result[1] = options.GuessPrior * Math.Pow(1.0 / k, n);
        var path = new int[n + 1];
        var paths = (int)Math.Pow(j, n + 1);
        for (var code = 0; code < paths; code++)
        {
            var c = code;
            for (var t = 0; t <= n; t++)
            {
                path[t] = c % j;
                c /= j;
            }

            var probability = options.UnexplainedPrior / j;
            for (var t = 0; t < n; t++)
            {
                probability *= steps[t].Correct ? 1 - p[path[t]] : p[path[t]] / (k - 1);
                var same = path[t] == path[t + 1] ? 1.0 : 0.0;
                probability *= steps[t].Teach ? ((1 - d) * same) + (d / j) : same;
            }

            result[2 + path[n]] += probability;
        }

        var total = result.Sum();
        return result.Select(v => v / total).ToArray();
    }

    private static void AssertWithinMatchesGrid(AnswerSourceBelief sources, double modelConfidence, double target, int k, double lapse)
    {
        // ProbabilityWithin recomputed from the grid weights, each state's rule error worked out here.
        var expected = sources.ModelWeight * modelConfidence;
        for (var j = 0; j < sources.GridWeights.Length; j++)
        {
            var p = (j + 0.5) / sources.GridWeights.Length * (k - 1.0) / k;
            var e = Math.Max(0, (p - (lapse * (k - 1.0) / k)) / (1 - lapse));
            expected += e <= target ? sources.GridWeights[j] : 0.0;
        }

        expected += (k - 1.0) / k <= target ? sources.GuessingWeight : 0.0;
        Assert.Equal(expected, sources.ProbabilityWithin(modelConfidence, target), 12);
    }

    private static void AssertNear(double expected, double actual, double tolerance) =>
        Assert.True(Math.Abs(actual - expected) <= tolerance, $"expected {expected} ± {tolerance}, got {actual}");

    private static void AssertParam(string name, Action action) =>
        Assert.Equal(name, Assert.ThrowsAny<ArgumentOutOfRangeException>(action).ParamName);

    private static void AssertParam(string name, Func<object> create) =>
        Assert.Equal(name, Assert.ThrowsAny<ArgumentOutOfRangeException>(create).ParamName);
}
