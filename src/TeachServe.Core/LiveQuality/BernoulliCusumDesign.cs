namespace TeachServe.Core.LiveQuality;

/// <summary>
/// A one-sided Bernoulli CUSUM on live-check errors, on an integer lattice (see <see cref="BernoulliCusum"/>).
/// The statistic S starts at 0; a wrong answer adds <see cref="Up"/>, a right one subtracts <see cref="Down"/>, S never
/// falls below 0, and the chart alarms when S reaches <see cref="Limit"/>. In nats, one lattice step is
/// <see cref="Unit"/>: <c>Up·Unit = ln(p1/p0)</c> and <c>Down·Unit = −ln((1−p1)/(1−p0))</c> for the drift error
/// <see cref="DriftError"/>, so S·Unit is exactly Page's log-likelihood-ratio CUSUM of p0 against that p1.
/// </summary>
/// <param name="TargetError">p0: the in-control answer error the chart is designed at.</param>
/// <param name="RequestedDriftError">The drift error asked for.</param>
/// <param name="DriftError">p1 after the weights were made integers (close to the one asked for).</param>
/// <param name="Up">Lattice steps added by a wrong answer.</param>
/// <param name="Down">Lattice steps subtracted by a right answer.</param>
/// <param name="Limit">Alarm when the statistic reaches this many steps.</param>
/// <param name="Unit">Nats per lattice step.</param>
/// <param name="InControlRunLength">Exact zero-state average run length at p0 (Markov chain).</param>
public sealed record BernoulliCusumDesign(
    double TargetError,
    double RequestedDriftError,
    double DriftError,
    int Up,
    int Down,
    int Limit,
    double Unit,
    double InControlRunLength)
{
    /// <summary>The control limit in nats (log-likelihood-ratio units).</summary>
    public double LimitNats => Limit * Unit;

    /// <summary>The next value of the statistic after one live check.</summary>
    public int Step(int statistic, bool wrong) => wrong ? statistic + Up : Math.Max(0, statistic - Down);

    /// <summary>Whether a statistic has reached the limit.</summary>
    public bool Alarms(int statistic) => statistic >= Limit;

    /// <summary>The exact zero-state average run length at answer error <paramref name="p"/>.</summary>
    public double RunLength(double p) => BernoulliCusum.AverageRunLength(Up, Down, Limit, p);
}
