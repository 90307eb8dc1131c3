namespace TeachServe.Core.LiveQuality;

/// <summary>How a refresher teaches and checks.</summary>
public sealed record RefresherSettings
{
    /// <summary>The rule-error target (the project's gate target).</summary>
    public required double TargetRuleError { get; init; }

    /// <summary>Teaching stops once the belief puts at least this probability on rules within target (and predicts error within target).</summary>
    public double Confidence { get; init; } = 0.8;

    /// <summary>At most this many teaching items.</summary>
    public int MaxItems { get; init; } = 10;

    /// <summary>Items in the check that follows (held-out items, no feedback).</summary>
    public int CheckItems { get; init; } = 10;

    /// <summary>An annotator answering exactly at the target answer error passes the check with at least this probability.</summary>
    public double PassAtTarget { get; init; } = 0.9;

    internal void Validate()
    {
        if (!(TargetRuleError >= 0 && TargetRuleError < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(TargetRuleError), TargetRuleError, "Must lie in [0, 1).");
        }

        if (!(Confidence > 0 && Confidence < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(Confidence), Confidence, "Must lie in (0, 1).");
        }

        ArgumentOutOfRangeException.ThrowIfLessThan(MaxItems, 1, nameof(MaxItems));
        ArgumentOutOfRangeException.ThrowIfLessThan(CheckItems, 1, nameof(CheckItems));
        if (!(PassAtTarget > 0 && PassAtTarget < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(PassAtTarget), PassAtTarget, "Must lie in (0, 1).");
        }
    }
}
