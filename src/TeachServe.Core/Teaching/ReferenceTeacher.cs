using TeachServe.Core.Model;

namespace TeachServe.Core.Teaching;

/// <summary>
/// Plain, obviously-correct versions of the two hot operations — the belief update and the adaptive choice —
/// written from DESIGN 2.3–2.4 with doubles, per-hypothesis predictions and no packing. Tests compare the fast
/// code against these; benchmarks measure the speed-up over them.
/// </summary>
internal static class ReferenceTeacher
{
    /// <summary>Observe then move, on plain arrays: β (normalised) and the learner's Q (unnormalised).</summary>
    public static void Teach(ModelVersion model, double[] belief, double[] learner, double q, double lapse, int item, int answer)
    {
        Observe(model, belief, lapse, item, answer);
        var m = model.HypothesisCount;
        var y = model.TrueLabel(item);
        for (var h = 0; h < m; h++)
        {
            if (model.Predict(h, item) != y)
            {
                learner[h] *= q;
            }
        }

        var learnerTotal = learner.Sum();
        var jump = 0.0;
        for (var h = 0; h < m; h++)
        {
            if (model.Predict(h, item) != y)
            {
                jump += (1 - q) * belief[h];
            }
        }

        var next = new double[m];
        for (var h = 0; h < m; h++)
        {
            var keep = model.Predict(h, item) == y ? 1.0 : q;
            next[h] = (belief[h] * keep) + (jump * learner[h] / learnerTotal);
        }

        Array.Copy(next, belief, m);
    }

    public static void Observe(ModelVersion model, double[] belief, double lapse, int item, int answer)
    {
        var k = model.LabelCount;
        var total = 0.0;
        for (var h = 0; h < belief.Length; h++)
        {
            var o = ((1 - lapse) * (model.Predict(h, item) == answer ? 1 : 0)) + (lapse / k);
            belief[h] *= o;
            total += belief[h];
        }

        for (var h = 0; h < belief.Length; h++)
        {
            belief[h] /= total;
        }
    }

    /// <summary>
    /// The adaptive rule with blend weight <paramref name="blend"/>, by explicit sums per candidate; a positive gain
    /// is multiplied by the item's entry of <paramref name="itemWeights"/> when given.
    /// </summary>
    public static int ChooseAdaptive(ModelVersion model, double[] belief, double[] learner, double q, double blend, bool[] shown, double[]? itemWeights = null)
    {
        var err = model.Error;
        var best = -1;
        var bestGain = double.NegativeInfinity;
        for (var x = 0; x < model.TeachCount; x++)
        {
            if (shown[x])
            {
                continue;
            }

            double sumQl = 0, sumQlErr = 0, sumQ = 0, wrongBelief = 0, wrongBeliefErr = 0, greedy = 0;
            for (var h = 0; h < model.HypothesisCount; h++)
            {
                var wrong = model.Predict(h, x) != model.TrueLabel(x);
                var l = wrong ? q : 1.0;
                sumQ += learner[h];
                sumQl += learner[h] * l;
                sumQlErr += learner[h] * l * err[h];
                if (wrong)
                {
                    wrongBelief += belief[h];
                    wrongBeliefErr += belief[h] * err[h];
                    greedy += learner[h] * err[h];
                }
            }

            var expectedAfter = sumQlErr / sumQl;
            var gain = ((1 - q) * (wrongBeliefErr - (wrongBelief * expectedAfter))) + (blend * (1 - q) * greedy / sumQ);
            if (itemWeights is not null && gain > 0)
            {
                gain *= itemWeights[x];
            }

            if (gain > bestGain)
            {
                bestGain = gain;
                best = x;
            }
        }

        return best;
    }
}
