using TeachServe.Core.Model;

namespace TeachServe.Core.Tests.Support;

/// <summary>
/// Independent reference for the switching-learner hidden Markov model: sums the probability of every learner
/// path (h_0, …, h_T) explicitly, with the keep-or-redraw transition of Singla et al. (ICML 2014) and lapse
/// observations (DESIGN 2.2–2.3). Exponential in the number of steps, so only for ≤ 6 hypotheses and ≤ 5 items.
/// REFERENCES.md E: brute-force enumerator [derived].
/// </summary>
internal static class LearnerPaths
{
    /// <summary>One answered step: the item, the label given, and whether feedback followed (a teaching step).</summary>
    public readonly record struct Step(int Item, int Answer, bool Teach);

    /// <summary>
    /// The joint probability of the answers, P(a_1..a_T) = Σ over paths, and the normalised marginal of the
    /// hypothesis held after the last step (all zeros when the answers are impossible).
    /// </summary>
    public static (double[] Marginal, double Likelihood) Enumerate(ModelVersion model, double q, double lapse, IReadOnlyList<Step> steps)
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

        var posteriors = Enumerable.Range(0, steps.Count).Select(PosteriorAfter).ToArray();
        var path = new int[steps.Count + 1];

        void Walk(int depth, double probability)
        {
            if (probability == 0)
            {
                return;
            }

            if (depth == steps.Count)
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
        return (z > 0 ? marginal.Select(v => v / z).ToArray() : marginal, z);
    }
}
