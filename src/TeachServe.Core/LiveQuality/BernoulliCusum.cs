using MathNet.Numerics.LinearAlgebra;

namespace TeachServe.Core.LiveQuality;

/// <summary>
/// Design and exact run lengths of the one-sided Bernoulli CUSUM (Page, "Continuous inspection schemes",
/// Biometrika 41, 1954) with log-likelihood-ratio weights for an answer error p0 against a drift error p1 (Reynolds
/// &amp; Stoumbos, "A CUSUM chart for monitoring a proportion when inspecting continuously", Journal of Quality
/// Technology 31(1), 1999). The weights are put on an integer lattice by adjusting p1 slightly so that the ratio of the
/// wrong-answer weight to the right-answer weight is a ratio of small integers Up/Down (Reynolds &amp; Stoumbos use
/// Down = 1; a finer Down keeps p1 closer to the one asked for). The chart is then an exact finite Markov chain and its
/// average run length (ARL) is the solution of a linear system (Brook &amp; Evans, "An approach to the probability
/// distribution of CUSUM run length", Biometrika 59, 1972).
/// </summary>
public static class BernoulliCusum
{
    /// <summary>Largest lattice the exact computation accepts (dense solve; about 0.1 s at this size).</summary>
    public const int MaxStates = 1200;

    /// <summary>The designs' lattices are refined until p1's weight ratio is within this relative distance.</summary>
    private const double RatioTolerance = 0.01;

    /// <summary>
    /// The chart for <paramref name="p0"/> against <paramref name="p1"/> with the smallest limit whose exact in-control
    /// ARL is at least <paramref name="inControlRunLength"/>.
    /// </summary>
    /// <param name="maxDown">The finest lattice tried: Down = 1..maxDown.</param>
    public static BernoulliCusumDesign Design(double p0, double p1, double inControlRunLength, int maxDown = 8)
    {
        CheckRates(p0, p1);
        if (!(inControlRunLength > 1) || double.IsInfinity(inControlRunLength))
        {
            throw new ArgumentOutOfRangeException(nameof(inControlRunLength), inControlRunLength, "Must be a finite number above 1.");
        }

        ArgumentOutOfRangeException.ThrowIfLessThan(maxDown, 1);
        var (up, down, adjusted, unit) = Lattice(p0, p1, maxDown);

        // Lorden ("Procedures for reacting to a change in distribution", Ann. Math. Stat. 42, 1971): a CUSUM of
        // log-likelihood ratios with limit h has in-control ARL ≥ e^h, so h = ln(ARL0) always suffices.
        var high = Math.Max(1, (int)Math.Ceiling(Math.Log(inControlRunLength) / unit));
        if (high > MaxStates)
        {
            throw new ArgumentOutOfRangeException(nameof(inControlRunLength), inControlRunLength, $"Needs a lattice of {high} states; at most {MaxStates}. Use a coarser lattice (smaller maxDown) or a shorter ARL0.");
        }

        var low = 1;
        while (low < high)
        {
            var middle = (low + high) / 2;
            if (AverageRunLength(up, down, middle, p0) >= inControlRunLength)
            {
                high = middle;
            }
            else
            {
                low = middle + 1;
            }
        }

        return new BernoulliCusumDesign(p0, p1, adjusted, up, down, low, unit, AverageRunLength(up, down, low, p0));
    }

    /// <summary>A chart with a given lattice and limit (for sweeps over the limit); its ARL0 is computed exactly.</summary>
    public static BernoulliCusumDesign WithLimit(double p0, double p1, int limit, int maxDown = 8)
    {
        CheckRates(p0, p1);
        ArgumentOutOfRangeException.ThrowIfLessThan(limit, 1);
        var (up, down, adjusted, unit) = Lattice(p0, p1, maxDown);
        return new BernoulliCusumDesign(p0, p1, adjusted, up, down, limit, unit, AverageRunLength(up, down, limit, p0));
    }

    /// <summary>
    /// The exact zero-state ARL of the lattice chart at answer error <paramref name="p"/>: with L(s) the expected
    /// number of further checks from statistic s, L(s) = 1 + p·L(s + up) + (1 − p)·L(max(0, s − down)) for
    /// 0 ≤ s &lt; limit and L(s) = 0 for s ≥ limit (Brook &amp; Evans 1972), solved by LU decomposition.
    /// </summary>
    public static double AverageRunLength(int up, int down, int limit, double p) => AverageRunLengths(up, down, limit, p)[0];

    /// <summary>L(s) for every starting state s = 0..limit−1 (a head start begins above 0).</summary>
    public static double[] AverageRunLengths(int up, int down, int limit, double p)
    {
        if (!(p > 0 && p <= 1))
        {
            throw new ArgumentOutOfRangeException(nameof(p), p, "Must lie in (0, 1]: with p = 0 the chart never alarms.");
        }

        return AverageRunLengths(up, down, limit, p, 1 - p);
    }

    /// <summary>
    /// L(s) for a lattice chart that steps up with probability <paramref name="pUp"/>, down with <paramref name="pDown"/>
    /// and stays otherwise: L(s) = 1 + pUp·L(s + up) + pDown·L(max(0, s − down)) + (1 − pUp − pDown)·L(s).
    /// </summary>
    public static double[] AverageRunLengths(int up, int down, int limit, double pUp, double pDown)
    {
        ArgumentOutOfRangeException.ThrowIfLessThan(up, 1);
        ArgumentOutOfRangeException.ThrowIfLessThan(down, 1);
        ArgumentOutOfRangeException.ThrowIfLessThan(limit, 1);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(limit, MaxStates);
        if (!(pUp > 0 && pDown >= 0 && pUp + pDown <= 1 + 1e-12))
        {
            throw new ArgumentOutOfRangeException(nameof(pUp), pUp, "Need pUp > 0, pDown ≥ 0 and pUp + pDown ≤ 1.");
        }

        var stay = Math.Max(0, 1 - pUp - pDown);
        var a = Matrix<double>.Build.Dense(limit, limit);
        var ones = Vector<double>.Build.Dense(limit, 1.0);
        for (var s = 0; s < limit; s++)
        {
            a[s, s] += 1.0 - stay;
            if (s + up < limit)
            {
                a[s, s + up] -= pUp;
            }

            a[s, Math.Max(0, s - down)] -= pDown;
        }

        return a.LU().Solve(ones).ToArray();
    }

    /// <summary>
    /// The corrected diffusion approximation of the ARL (Siegmund, "Sequential Analysis", 1985, ch. X, with the
    /// Bernoulli overshoot correction of Reynolds &amp; Stoumbos 1999). In count units (the statistic divided by the
    /// log odds ratio r2 = ln(p1(1−p0)/(p0(1−p1))), so that each check adds X − γ with γ = r1/r2 and
    /// r1 = −ln((1−p1)/(1−p0))), the increment has mean μ = p − γ and θ ≠ 0 solves E[e^{θ(X−γ)}] = 1; then
    /// ARL ≈ (e^{θh*} − θh* − 1)/|θμ| with h* = h + ε(p)·√(p(1−p)), and (h*)²/(p(1−p)) when μ = 0.
    /// </summary>
    /// <remarks>
    /// The correction ε(p) is taken from a public R implementation of the Reynolds &amp; Stoumbos design procedure
    /// (derived from M. R. Reynolds' Fortran code); the paper itself was not in hand, so its constants are marked
    /// <c>from memory</c> of that source rather than checked against the printed article.
    /// </remarks>
    public static double DiffusionApproximation(BernoulliCusumDesign design, double p)
    {
        ArgumentNullException.ThrowIfNull(design);
        if (!(p > 0 && p < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(p), p, "Must lie in (0, 1).");
        }

        var p0 = design.TargetError;
        var p1 = design.DriftError;
        var r1 = -Math.Log((1 - p1) / (1 - p0));
        var r2 = Math.Log(p1 * (1 - p0) / (p0 * (1 - p1)));
        var gamma = r1 / r2;
        var h = design.LimitNats / r2;
        var hStar = h + (OvershootCorrection(p) * Math.Sqrt(p * (1 - p)));
        var mu = p - gamma;
        if (Math.Abs(mu) < 1e-12)
        {
            return hStar * hStar / (p * (1 - p));
        }

        var theta = TiltRoot(p, gamma, mu);
        return (Math.Exp(theta * hStar) - (theta * hStar) - 1) / Math.Abs(theta * mu);
    }

    /// <summary>ε(p) of the Reynolds &amp; Stoumbos correction (see <see cref="DiffusionApproximation"/>).</summary>
    internal static double OvershootCorrection(double p)
    {
        if (p < 0.01)
        {
            return (Math.Sqrt((1 - p) / p) - Math.Sqrt(p / (1 - p))) / 3.0;
        }

        var l = Math.Log(p);
        return 0.410 - (0.0842 * l) - (0.0391 * Math.Pow(l, 3)) - (0.00376 * Math.Pow(l, 4)) - (0.000008 * Math.Pow(l, 7));
    }

    /// <summary>The non-zero θ with p·e^{θ(1−γ)} + (1−p)·e^{−θγ} = 1, positive when the drift μ is negative.</summary>
    private static double TiltRoot(double p, double gamma, double mu)
    {
        double F(double t) => Math.Log((p * Math.Exp(t * (1 - gamma))) + ((1 - p) * Math.Exp(-t * gamma)));
        var sign = mu < 0 ? 1.0 : -1.0;
        var far = sign;
        while (F(far) <= 0)
        {
            far *= 2;
            if (Math.Abs(far) > 1e6)
            {
                throw new ArithmeticException("No tilt root found.");
            }
        }

        // F is convex with F(0) = 0 and F'(0) = μ, so it is negative between 0 and the root and positive beyond.
        var near = sign * 1e-12;
        for (var i = 0; i < 200; i++)
        {
            var middle = 0.5 * (near + far);
            if (F(middle) > 0)
            {
                far = middle;
            }
            else
            {
                near = middle;
            }
        }

        return 0.5 * (near + far);
    }

    /// <summary>Up/Down and the p1 that makes ln(p1/p0) : −ln((1−p1)/(1−p0)) exactly Up : Down.</summary>
    private static (int Up, int Down, double P1, double Unit) Lattice(double p0, double p1, int maxDown)
    {
        var ratio = Math.Log(p1 / p0) / -Math.Log((1 - p1) / (1 - p0));
        int bestUp = 1, bestDown = 1;
        var bestMiss = double.PositiveInfinity;
        for (var down = 1; down <= maxDown; down++)
        {
            var up = Math.Max(1, (int)Math.Round(ratio * down));
            var miss = Math.Abs(((double)up / down) - ratio) / ratio;
            if (miss < bestMiss - 1e-12)
            {
                (bestUp, bestDown, bestMiss) = (up, down, miss);
            }

            if (miss <= RatioTolerance)
            {
                break;
            }
        }

        var target = (double)bestUp / bestDown;

        // The weight ratio falls as p1 rises from p0 (towards 1 it tends to 0), so bisection finds the p1 for it.
        double lo = p0 + (1e-12 * (1 - p0)), hi = 1 - 1e-12;
        for (var i = 0; i < 200; i++)
        {
            var middle = 0.5 * (lo + hi);
            var r = Math.Log(middle / p0) / -Math.Log((1 - middle) / (1 - p0));
            if (r > target)
            {
                lo = middle;
            }
            else
            {
                hi = middle;
            }
        }

        var adjusted = 0.5 * (lo + hi);
        var unit = -Math.Log((1 - adjusted) / (1 - p0)) / bestDown;
        return (bestUp, bestDown, adjusted, unit);
    }

    private static void CheckRates(double p0, double p1)
    {
        if (!(p0 > 0 && p0 < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(p0), p0, "Must lie in (0, 1).");
        }

        if (!(p1 > p0 && p1 < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(p1), p1, "Must lie in (p0, 1).");
        }
    }
}
