namespace TeachServe.Core.Learning;

/// <summary>Priors, drift and grid of <see cref="AnswerSourceBelief"/>; the model source gets the prior mass left over.</summary>
public sealed record AnswerSourceOptions
{
    /// <summary>Prior probability that the annotator answers uniformly at random and never learns.</summary>
    public double GuessPrior { get; init; } = 0.02;

    /// <summary>Prior probability that the annotator holds a rule outside the hypothesis set, spread uniformly over the grid.</summary>
    public double UnexplainedPrior { get; init; } = 0.05;

    /// <summary>After each teaching answer, the probability that an unexplained annotator's answer-error rate is redrawn from its prior.</summary>
    public double Drift { get; init; } = 0.1;

    /// <summary>Number of answer-error rates on the grid: the midpoints of J equal cells of (0, (K−1)/K).</summary>
    public int GridSize { get; init; } = 20;

    internal void Validate()
    {
        if (!(GuessPrior >= 0 && GuessPrior <= 1))
        {
            throw new ArgumentOutOfRangeException(nameof(GuessPrior), GuessPrior, "Must lie in [0, 1].");
        }

        if (!(UnexplainedPrior >= 0 && UnexplainedPrior <= 1))
        {
            throw new ArgumentOutOfRangeException(nameof(UnexplainedPrior), UnexplainedPrior, "Must lie in [0, 1].");
        }

        if (!(GuessPrior + UnexplainedPrior <= 1))
        {
            throw new ArgumentOutOfRangeException(
                nameof(UnexplainedPrior),
                UnexplainedPrior,
                $"GuessPrior + UnexplainedPrior must not exceed 1 (the model gets the rest); got {GuessPrior} + {UnexplainedPrior}.");
        }

        if (!(Drift >= 0 && Drift <= 1))
        {
            throw new ArgumentOutOfRangeException(nameof(Drift), Drift, "Must lie in [0, 1].");
        }

        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(GridSize, nameof(GridSize));
    }
}
