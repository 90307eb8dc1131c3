using TeachServe.Core.Model;
using TeachServe.Core.Projects;
using TeachServe.Core.Simulation;
using TeachServe.Core.Teaching;

namespace TeachServe.Core.Tests.Engine;

/// <summary>
/// Simulated learners unlike the model: each reproduces a published qualitative property, answers from item
/// features only, and runs through the unchanged simulator.
/// </summary>
public class LearnerKindTests
{
    /// <summary>Two classes as two clusters on a line (feature x) plus a second feature y of pure noise.</summary>
    private static (ModelVersion Model, ItemDefinition[] Items) Clusters(int seed = 1, int perClass = 20, double spread = 1.0)
    {
        var random = new SeededRandom((ulong)seed);
        var items = new List<ItemDefinition>();
        for (var c = 0; c < 2; c++)
        {
            for (var i = 0; i < perClass; i++)
            {
                var x = (c == 0 ? -2.0 : 2.0) + (spread * random.NextGaussian());
                items.Add(new ItemDefinition
                {
                    Id = $"i{c}{i:00}", Pool = i < perClass * 3 / 4 ? Pools.Teach : Pools.Test, Label = c == 0 ? "a" : "b",
                    Features = new Dictionary<string, double> { ["x"] = x, ["y"] = random.NextGaussian() },
                });
            }
        }

        var ordered = items.Where(i => i.Pool == Pools.Teach).Concat(items.Where(i => i.Pool == Pools.Test)).ToArray();
        var truth = ordered.Select(i => i.Label == "a" ? 0 : 1).ToArray();
        var teach = ordered.Count(i => i.Pool == Pools.Teach);
        // A deliberately poor hypothesis set: the target and two constant rules. Learners unlike the model ignore it.
        (byte[], double)[] hypotheses = [([.. ordered.Select(_ => (byte)0)], 1.0), ([.. ordered.Select(_ => (byte)1)], 1.0)];
        var model = ModelCompiler.FromPredictions(["a", "b"], [.. ordered.Select(i => i.Id)], teach, truth, hypotheses, new LearnerSettings { Alpha = 1.5, Lapse = 0.0 });
        return (model, [.. items]);
    }

    [Fact]
    public void The_exemplar_learner_shows_a_typicality_gradient()
    {
        // Nosofsky, "Exemplar-based accounts of relations between classification, recognition, and typicality",
        // J. Exp. Psych.: LMC 14, 1988: items near many members of their class are classified more surely than
        // items near the boundary. Here: P(correct) rises with distance from the boundary x = 0.
        var (model, items) = Clusters(spread: 1.2);
        var features = ItemFeatures.From(model, items);
        var learner = new SimilarityLearner(model, features, prototype: false, [1.0, 0.0], sensitivity: 4, responseScaling: 1, lapse: 0, new SeededRandom(2));
        for (var i = 0; i < model.TeachCount; i++)
        {
            learner.SeeFeedback(i);
        }

        var xColumn = features.Names.ToList().IndexOf("x");
        var byTypicality = Enumerable.Range(0, model.ItemCount)
            .Select(i => (Distance: Math.Abs(items.Single(d => d.Id == model.ItemIds[i]).Features!["x"]), Correct: Correct(learner, model, i)))
            .OrderBy(t => t.Distance).ToArray();
        var third = byTypicality.Length / 3;
        var borderline = byTypicality.Take(third).Average(t => t.Correct);
        var typical = byTypicality.Skip(2 * third).Average(t => t.Correct);
        Assert.True(typical > borderline + 0.1, $"typical {typical:F3}, borderline {borderline:F3}");
        Assert.True(xColumn >= 0);
    }

    [Fact]
    public void The_prototype_learner_classifies_the_unseen_prototype_at_least_as_well_as_the_shown_examples()
    {
        // Posner & Keele, "On the genesis of abstract ideas", J. Exp. Psych. 77, 1968: the never-shown prototype is
        // classified at least as well as the studied distortions. The class mean is the prototype here; it is added
        // as an item that is never shown.
        var (model, items) = Clusters(seed: 3, spread: 1.5);
        var taught = Enumerable.Range(0, model.TeachCount).ToArray();
        var means = new[] { 0, 1 }.Select(c => items.Where(i => i.Pool == Pools.Teach && (i.Label == "a" ? 0 : 1) == c)).Select(g => (X: g.Average(i => i.Features!["x"]), Y: g.Average(i => i.Features!["y"]))).ToArray();
        var withPrototypes = items.Concat(means.Select((m, c) => new ItemDefinition
        {
            Id = $"proto{c}", Pool = Pools.Test, Label = c == 0 ? "a" : "b", Features = new Dictionary<string, double> { ["x"] = m.X, ["y"] = m.Y },
        })).ToArray();
        var ordered = withPrototypes.Where(i => i.Pool == Pools.Teach).Concat(withPrototypes.Where(i => i.Pool == Pools.Test)).ToArray();
        var truth = ordered.Select(i => i.Label == "a" ? 0 : 1).ToArray();
        var full = ModelCompiler.FromPredictions(["a", "b"], [.. ordered.Select(i => i.Id)], model.TeachCount, truth, [([.. truth.Select(t => (byte)t)], 1.0)], new LearnerSettings());
        var features = ItemFeatures.From(full, withPrototypes);
        var learner = new SimilarityLearner(full, features, prototype: true, [0.5, 0.5], sensitivity: 2, responseScaling: 1, lapse: 0, new SeededRandom(4));
        foreach (var i in taught)
        {
            learner.SeeFeedback(i);
        }

        var shown = taught.Average(i => Correct(learner, full, i));
        var prototypes = new[] { full.ItemCount - 2, full.ItemCount - 1 }.Average(i => Correct(learner, full, i));
        Assert.True(prototypes >= shown, $"prototypes {prototypes:F3}, shown {shown:F3}");
    }

    [Fact]
    public void Partial_attention_ignores_the_unattended_feature()
    {
        var (model, items) = Clusters(seed: 5);
        var changed = items.Select(i => i with { Features = new Dictionary<string, double> { ["x"] = i.Features!["x"], ["y"] = -7 * i.Features["y"] } }).ToArray();
        double[] P(ItemDefinition[] source, int item)
        {
            var learner = new SimilarityLearner(model, ItemFeatures.From(model, source), prototype: true, [1.0, 0.0], 3, 2, 0, new SeededRandom(6));
            for (var i = 0; i < model.TeachCount; i++)
            {
                learner.SeeFeedback(i);
            }

            var p = new double[2];
            learner.Probabilities(item, p);
            return p;
        }

        for (var item = 0; item < model.ItemCount; item += 7)
        {
            Assert.Equal(P(items, item), P(changed, item));
        }

        // The control: attending to y does change them.
        var attending = new SimilarityLearner(model, ItemFeatures.From(model, changed), prototype: true, [0.5, 0.5], 3, 2, 0, new SeededRandom(6));
        for (var i = 0; i < model.TeachCount; i++)
        {
            attending.SeeFeedback(i);
        }

        var q = new double[2];
        attending.Probabilities(0, q);
        Assert.NotEqual(P(items, 0), q);
    }

    [Fact]
    public void A_decision_list_learner_shown_every_item_finds_a_list_consistent_with_a_decision_list_truth()
    {
        // Rivest, "Learning decision lists", Machine Learning 2, 1987: the greedy algorithm finds a list consistent
        // with the examples whenever one exists among the allowed tests. Truth: cue p → b; else cue q → a; else b.
        var random = new SeededRandom(7);
        var items = Enumerable.Range(0, 64).Select(i =>
        {
            var cues = new[] { "p", "q", "r" }.Where(_ => random.NextDouble() < 0.5).ToList();
            var label = cues.Contains("p") ? "b" : cues.Contains("q") ? "a" : "b";
            return new ItemDefinition { Id = $"t{i:00}", Pool = i < 48 ? Pools.Teach : Pools.Test, Label = label, Attributes = cues };
        }).ToArray();
        var truth = items.Select(i => i.Label == "a" ? 0 : 1).ToArray();
        var model = ModelCompiler.FromPredictions(["a", "b"], [.. items.Select(i => i.Id)], 48, truth, [([.. truth.Select(t => (byte)t)], 1.0)], new LearnerSettings());
        var learner = new DecisionListLearner(model, ItemFeatures.From(model, items), alpha: double.PositiveInfinity, lapse: 0, new SeededRandom(8));
        for (var round = 0; round < 3; round++)
        {
            for (var i = 0; i < model.TeachCount; i++)
            {
                learner.SeeFeedback(i);
            }
        }

        Assert.All(Enumerable.Range(0, model.TeachCount), i => Assert.Equal(model.TrueLabel(i), learner.Classify(i)));
        Assert.True(learner.List.Count <= DecisionListLearner.MaxTests);
        Assert.Equal(0.0, learner.TrueError, 12);
    }

    [Theory]
    [InlineData(LearnerVariant.Exemplar)]
    [InlineData(LearnerVariant.Prototype)]
    [InlineData(LearnerVariant.ObliqueRules)]
    [InlineData(LearnerVariant.DecisionLists)]
    [InlineData(LearnerVariant.PartialAttention)]
    public void Learners_unlike_the_model_answer_from_features_only_never_from_the_hypothesis_set(LearnerVariant kind)
    {
        // The same items under two very different hypothesis sets: the same seed gives the same answers.
        var (model, items) = Clusters(seed: 9);
        var truth = Enumerable.Range(0, model.ItemCount).Select(model.TrueLabel).ToArray();
        var random = new SeededRandom(10);
        var other = ModelCompiler.FromPredictions(["a", "b"], model.ItemIds, model.TeachCount, truth,
            Enumerable.Range(0, 50).Select(_ => (Enumerable.Range(0, model.ItemCount).Select(_ => (byte)random.NextInt(2)).ToArray(), 1.0)), new LearnerSettings());
        Assert.NotEqual(model.HypothesisCount, other.HypothesisCount);
        int[] Answers(ModelVersion m)
        {
            var learner = LearnerKinds.Create(m, kind, ItemFeatures.From(m, items), 1.5, 0.05, 0.1, new SeededRandom(11));
            var answers = new List<int>();
            for (var i = 0; i < m.ItemCount; i++)
            {
                answers.Add(learner.Answer(i));
                if (i < m.TeachCount)
                {
                    learner.SeeFeedback(i);
                }
            }

            return [.. answers];
        }

        Assert.Equal(Answers(model), Answers(other));
    }

    [Fact]
    public void An_oblique_rule_learner_answers_with_the_rule_it_holds()
    {
        var (model, items) = Clusters(seed: 12);
        var rules = LearnerKinds.ObliqueRules(model, ItemFeatures.From(model, items), new SeededRandom(13));
        Assert.Equal(LearnerKinds.ObliqueRuleCount, rules.Length);
        var learner = new RuleSwitchingLearner(model, rules, alpha: 1.5, lapse: 0, new SeededRandom(14));
        for (var i = 0; i < model.TeachCount; i++)
        {
            Assert.Equal(rules[learner.Rule][i], learner.Answer(i));
            learner.SeeFeedback(i);
            Assert.Equal(learner.RuleErrors[learner.Rule], learner.TrueError);
        }

        // Its family holds good rules (the noisy class-mean discriminants) and poor ones (random hyperplanes).
        Assert.True(learner.RuleErrors.Min() < 0.1 && learner.RuleErrors.Max() > 0.3);
    }

    [Fact]
    public void The_simulator_runs_the_assumed_learner_exactly_as_before()
    {
        // The factory hands the in-family variants to the same learner with the same random stream: a hand-run loop
        // with SimulatedLearner gives the same release count and mean final error.
        var model = TinyModels.Random(21, m: 80, teach: 40, test: 60, labels: 2, alpha: 1.5, lapse: 0.05);
        var session = new SessionOptions { Policy = PolicyNames.Adaptive, Gate = new GateSettings { MaxTeachingItems = 12, Test = new TestSettings { MaxItems = 50, Delta = 0.3 } } };
        var result = Simulator.Run(model, new SimulationOptions { Session = session, Learners = 30, Seed = 5, Variant = LearnerVariant.Slow });
        int released = 0;
        var finalError = 0.0;
        for (var i = 0; i < 30; i++)
        {
            var learner = new SimulatedLearner(model, LearnerVariant.Slow, 1.5, 0.05, 0.1, new SeededRandom(SeededRandom.Derive(5, (ulong)i)));
            var run = SessionRun.Start(model, session with { Seed = SeededRandom.Derive(5 ^ 0x5EED, (ulong)i) });
            while (!run.IsEnded)
            {
                var item = run.CurrentItem;
                var teaching = run.Phase == SessionPhase.Teaching;
                run.Answer(learner.Answer(item));
                if (teaching)
                {
                    learner.SeeFeedback(item);
                }
            }

            released += run.Phase == SessionPhase.Released ? 1 : 0;
            finalError += learner.TrueError;
        }

        Assert.Equal(released, result.Released);
        Assert.Equal(finalError / 30, result.MeanFinalTrueError, 12);
    }

    [Fact]
    public void A_kind_that_needs_features_is_refused_without_them()
    {
        var (model, _) = Clusters();
        var options = new SimulationOptions { Session = new SessionOptions(), Learners = 1, Variant = LearnerVariant.Exemplar };
        Assert.Throws<ArgumentException>(() => Simulator.Run(model, options));
        var bare = new[] { new ItemDefinition { Id = model.ItemIds[0], Pool = Pools.Teach, Label = "a" } };
        Assert.Throws<ArgumentException>(() => ItemFeatures.From(model, bare));
    }

    private static double Correct(SimilarityLearner learner, ModelVersion model, int item)
    {
        var p = new double[model.LabelCount];
        learner.Probabilities(item, p);
        return p[model.TrueLabel(item)];
    }
}
