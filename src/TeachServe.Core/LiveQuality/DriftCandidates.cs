using TeachServe.Core.Model;

namespace TeachServe.Core.LiveQuality;

/// <summary>
/// The rules an annotator is most likely to drift to, for the candidate-rule CUSUMs: hypotheses whose rule error is
/// above target, ranked by β(h) + P0(h), the mass the annotator's belief at release still gives them (their own likely
/// confusions) plus their prior mass (how tempting a shortcut they are to anyone). Chosen once, at release, from
/// nothing the annotator does later, so the chart's false-alarm rate is that of a fixed procedure.
/// </summary>
public static class DriftCandidates
{
    public static int[] Choose(ModelVersion model, ReadOnlySpan<double> releaseBelief, double targetRuleError, int count)
    {
        ArgumentNullException.ThrowIfNull(model);
        ArgumentOutOfRangeException.ThrowIfLessThan(count, 0);
        if (releaseBelief.Length != model.HypothesisCount)
        {
            throw new ArgumentException("The belief must have one weight per hypothesis.", nameof(releaseBelief));
        }

        var error = model.Error;
        var prior = model.Prior;
        var scored = new List<(double Score, int Hypothesis)>();
        for (var h = 0; h < model.HypothesisCount; h++)
        {
            if (error[h] > targetRuleError)
            {
                scored.Add((releaseBelief[h] + prior[h], h));
            }
        }

        // Ties broken by index so that the choice is reproducible.
        return [.. scored.OrderByDescending(s => s.Score).ThenBy(s => s.Hypothesis).Take(count).Select(s => s.Hypothesis)];
    }
}
