using TeachServe.Core.Model;

namespace TeachServe.Core.Learning;

/// <summary>
/// The same session's <see cref="Belief"/> under several learner strengths (alpha, DESIGN 2.2), for statements that
/// must hold whichever strength the annotator has: the belief-mode gate releases on the <em>lowest</em> confidence
/// over the strengths, not on the assumed one's alone.
/// </summary>
/// <remarks>
/// <para>Why. A belief computed with the assumed alpha is over-confident for an annotator who learns more slowly: such
/// an annotator keeps a rule shown wrong more often (q = 1/(1+e^alpha) is larger) and redraws from a flatter
/// posterior, so a bad rule survives teaching more often than the assumed belief allows for. In a seeded simulation
/// (ticket-triage seed project, 1,000 slow learners, seed 7, release after 6 test answers) a gate trusting the assumed
/// belief released 12 of the 52 whose rule error ended above target + delta.</para>
/// <para>How. Taking the lowest posterior probability over a set of models is robust Bayesian analysis over a class of
/// priors (Berger, "Statistical Decision Theory and Bayesian Analysis", 2nd ed., 1985, section 4.7 (from memory): report the range of
/// the posterior over the class, act on its conservative end). The class here is a few alpha values; each filter is
/// exact for its alpha (DESIGN 2.3), so the lowest confidence is exact for the class.</para>
/// <para>Cost. One filter per strength, each allocation-free per answer (<see cref="Belief.Teach"/>,
/// <see cref="Belief.Observe"/>); only sessions whose gate uses them build them.</para>
/// </remarks>
public sealed class LearnerStrengthBeliefs
{
    private readonly Belief[] _beliefs;

    /// <param name="model">The compiled model version.</param>
    /// <param name="alphas">Learner strengths; each gets its own filter.</param>
    /// <param name="lapse">The lapse rate, shared by every filter.</param>
    public LearnerStrengthBeliefs(ModelVersion model, IReadOnlyList<double> alphas, double lapse)
    {
        ArgumentNullException.ThrowIfNull(model);
        ArgumentNullException.ThrowIfNull(alphas);
        if (alphas.Count == 0)
        {
            throw new ArgumentException("At least one learner strength is needed.", nameof(alphas));
        }

        _beliefs = new Belief[alphas.Count];
        for (var k = 0; k < alphas.Count; k++)
        {
            if (!(alphas[k] >= 0))
            {
                throw new ArgumentOutOfRangeException(nameof(alphas), alphas[k], "Learner strengths must be ≥ 0 (∞ allowed).");
            }

            _beliefs[k] = new Belief(model, ModelVersion.DisagreementFactor(alphas[k]), lapse);
        }

        Alphas = [.. alphas];
    }

    public IReadOnlyList<double> Alphas { get; }

    /// <summary>The filter for <see cref="Alphas"/>[<paramref name="index"/>].</summary>
    public Belief this[int index] => _beliefs[index];

    /// <summary>A teaching answer, to every filter (observe, then move).</summary>
    public void Teach(int item, int answer)
    {
        foreach (var belief in _beliefs)
        {
            belief.Teach(item, answer);
        }
    }

    /// <summary>A test answer, to every filter (observe only: nothing is shown).</summary>
    public void Observe(int item, int answer)
    {
        foreach (var belief in _beliefs)
        {
            belief.Observe(item, answer);
        }
    }

    /// <summary>min over strengths of C(ε) = Σ_h β(h)·1[err(h) ≤ ε].</summary>
    public double LowestConfidence(double ruleError)
    {
        var lowest = 1.0;
        foreach (var belief in _beliefs)
        {
            lowest = Math.Min(lowest, belief.Confidence(ruleError));
        }

        return lowest;
    }
}
