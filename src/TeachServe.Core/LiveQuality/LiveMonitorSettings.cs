using TeachServe.Core.Teaching;

namespace TeachServe.Core.LiveQuality;

/// <summary>
/// The drift monitors of one project. Every rate here is an answer error (the share of live checks answered wrong,
/// lapses included), the same quantity the model view reports as <see cref="LiveBelief.PredictedAnswerError"/>; a rule
/// error target is mapped to it as the gate maps it (<see cref="GateDesign.AnswerError"/>).
/// </summary>
public sealed record LiveMonitorSettings
{
    /// <summary>The count CUSUM: target answer error p0 against drift answer error p1, with its limit.</summary>
    public required BernoulliCusumDesign Cusum { get; init; }

    /// <summary>Share of the CUSUM limit at which the annotator is put on watch.</summary>
    public double WatchFraction { get; init; } = 0.5;

    /// <summary>
    /// Limit of each candidate-rule CUSUM, in units of its weight w = ln((1−p0)(K−1)/p0); 0 turns them off. An answer
    /// to an item where the candidate rule and the known label differ adds +1 if it is the candidate's label, −1 if it
    /// is the known label, 0 otherwise; every other answer carries no evidence about that rule.
    /// </summary>
    public int CandidateLimit { get; init; }

    /// <summary>
    /// The item-aware CUSUM (<see cref="ItemAwareCusumDesign"/>, calibrated by <see cref="ItemAwareCusum.Design"/>);
    /// null turns it off.
    /// </summary>
    public ItemAwareCusumDesign? ItemAware { get; init; }

    /// <summary>Level of the always-valid mixture test (alarm when Λ ≥ 1/α); 0 turns it off.</summary>
    public double MixtureAlpha { get; init; }

    /// <summary>The mixture's beta prior (restricted to errors above p0).</summary>
    public double MixtureA { get; init; } = 1;

    /// <summary>The mixture's beta prior (restricted to errors above p0).</summary>
    public double MixtureB { get; init; } = 4;

    public double TargetAnswerError => Cusum.TargetError;

    /// <summary>
    /// Settings from rule errors: p0 = the target's answer error, p1 = the answer error of a rule erring at
    /// <paramref name="driftRuleError"/>, with the CUSUM limit giving an exact in-control ARL ≥ <paramref name="inControlRunLength"/> at p0.
    /// </summary>
    public static LiveMonitorSettings Create(double targetRuleError, double driftRuleError, double lapse, int labelCount, double inControlRunLength)
    {
        var p0 = GateDesign.AnswerError(targetRuleError, lapse, labelCount);
        var p1 = GateDesign.AnswerError(driftRuleError, lapse, labelCount);
        return new LiveMonitorSettings { Cusum = BernoulliCusum.Design(p0, p1, inControlRunLength) };
    }

    internal void Validate()
    {
        ArgumentNullException.ThrowIfNull(Cusum);
        if (!(WatchFraction > 0 && WatchFraction <= 1))
        {
            throw new ArgumentOutOfRangeException(nameof(WatchFraction), WatchFraction, "Must lie in (0, 1].");
        }

        ArgumentOutOfRangeException.ThrowIfNegative(CandidateLimit, nameof(CandidateLimit));
        if (ItemAware is { } itemAware && !(itemAware.Limit > 0 && !double.IsInfinity(itemAware.Limit)))
        {
            throw new ArgumentOutOfRangeException(nameof(ItemAware), itemAware.Limit, "The item-aware CUSUM needs a finite limit (calibrate it).");
        }
        if (!(MixtureAlpha >= 0 && MixtureAlpha < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(MixtureAlpha), MixtureAlpha, "Must lie in [0, 1).");
        }
    }
}
