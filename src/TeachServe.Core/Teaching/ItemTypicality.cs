using System.Collections.Concurrent;
using System.Runtime.CompilerServices;
using TeachServe.Core.Model;

namespace TeachServe.Core.Teaching;

/// <summary>
/// How typical each teach item is of its label: the share of the prior mass of acceptable rules (error within the
/// target) that label it right. An item most acceptable rules get right is a plain case of its label; an item only
/// the target and a few close rules get right is an exception, informative for a learner of the model's family but a
/// misleading example for one who generalises from cases (exemplar, prototype) or builds rules of another form
/// (decision lists), since it contradicts the simple rules those learners form first.
/// Computed once per model version and target, and shared by every session.
/// </summary>
public static class ItemTypicality
{
    private static readonly ConditionalWeakTable<ModelVersion, ConcurrentDictionary<(double Limit, double Power), double[]>> Cache = new();

    /// <summary>
    /// One value in [0, 1] per teach item: the prior share of the rules with error at most <paramref name="limit"/>
    /// that label it right. The target is always counted, so no item is left without rules; with no other rule that
    /// close every item has typicality 1 and the weights change nothing.
    /// </summary>
    public static double[] Of(ModelVersion model, double limit) => Weights(model, limit, 1.0)!;

    /// <summary>
    /// Typicality to the power <paramref name="power"/>, cached per model version, limit and power (the array is
    /// shared: do not write to it); null for power 0, which turns the preference off.
    /// </summary>
    public static double[]? Weights(ModelVersion model, double limit, double power)
    {
        ArgumentNullException.ThrowIfNull(model);
        ArgumentOutOfRangeException.ThrowIfNegative(power);
        if (power == 0)
        {
            return null;
        }

        return Cache.GetOrCreateValue(model).GetOrAdd((limit, power), key =>
        {
            var typicality = Compute(model, key.Limit);
            for (var x = 0; x < typicality.Length; x++)
            {
                typicality[x] = Math.Pow(typicality[x], key.Power);
            }

            return typicality;
        });
    }

    private static double[] Compute(ModelVersion model, double targetError)
    {
        var prior = model.Prior;
        var error = model.Error;
        double total = 0;
        for (var h = 0; h < model.HypothesisCount; h++)
        {
            total += error[h] <= targetError || h == model.TargetIndex ? prior[h] : 0.0;
        }

        var typicality = new double[model.TeachCount];
        for (var x = 0; x < model.TeachCount; x++)
        {
            double right = 0;
            for (var h = 0; h < model.HypothesisCount; h++)
            {
                if ((error[h] <= targetError || h == model.TargetIndex) && !model.Mistake(h, x))
                {
                    right += prior[h];
                }
            }

            typicality[x] = total > 0 ? right / total : 1.0;
        }

        return typicality;
    }
}
