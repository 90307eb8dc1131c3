using MathNet.Numerics;

namespace TeachServe.Core.Statistics;

/// <summary>Checking that an experiment assigned annotators to arms in the planned ratio.</summary>
public static class SampleRatio
{
    /// <summary>
    /// Pearson's χ² goodness-of-fit test of the observed arm counts against the planned weights
    /// (sample-ratio-mismatch check): <c>χ² = Σ (O − E)²/E</c>, <c>E = N·w/Σw</c>, with k − 1 degrees of freedom.
    /// A tiny p-value means the assignment is broken and the experiment's results should not be trusted.
    /// </summary>
    /// <param name="observed">Annotators seen per arm, each ≥ 0.</param>
    /// <param name="plannedWeights">Planned share per arm, each positive and finite (need not sum to 1).</param>
    /// <returns>χ², k − 1 and the upper-tail p-value; NaN statistic and p-value when no annotator was observed.</returns>
    /// <exception cref="ArgumentException">The lists differ in length or have fewer than two arms.</exception>
    public static TestResult ChiSquare(IReadOnlyList<long> observed, IReadOnlyList<double> plannedWeights)
    {
        ArgumentNullException.ThrowIfNull(observed);
        ArgumentNullException.ThrowIfNull(plannedWeights);
        if (observed.Count != plannedWeights.Count)
        {
            throw new ArgumentException("One planned weight per observed arm is needed.", nameof(plannedWeights));
        }

        if (observed.Count < 2)
        {
            throw new ArgumentException("At least two arms are needed.", nameof(observed));
        }

        double total = 0, weightTotal = 0;
        for (var i = 0; i < observed.Count; i++)
        {
            if (observed[i] < 0)
            {
                throw new ArgumentOutOfRangeException(nameof(observed), observed[i], "Counts must not be negative.");
            }

            Guard.Positive(plannedWeights[i], nameof(plannedWeights));
            total += observed[i];
            weightTotal += plannedWeights[i];
        }

        var df = observed.Count - 1;
        if (total == 0)
        {
            return new TestResult(double.NaN, df, double.NaN);
        }

        var chiSquare = 0.0;
        for (var i = 0; i < observed.Count; i++)
        {
            var expected = total * plannedWeights[i] / weightTotal;
            var diff = observed[i] - expected;
            chiSquare += diff * diff / expected;
        }

        // Q(k/2, χ²/2) is the χ² upper tail; 1 − CDF would lose relative precision as p shrinks (all of it below 1e-16).
        return new TestResult(chiSquare, df, SpecialFunctions.GammaUpperRegularized(df / 2.0, chiSquare / 2));
    }
}
