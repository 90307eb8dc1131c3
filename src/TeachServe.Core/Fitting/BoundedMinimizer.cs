namespace TeachServe.Core.Fitting;

/// <summary>
/// Minimum of a function of one variable on a closed interval: Brent's method, golden-section steps safeguarding
/// parabolic interpolation (R. P. Brent, "Algorithms for Minimization without Derivatives", 1973, ch. 5,
/// procedure localmin). Used for the inner maximisations of the profile likelihood, where it needs far fewer
/// evaluations than plain golden section. Unlike localmin it also compares the interval's ends, so a minimum on
/// the boundary (lapse = 0, say) is returned exactly.
/// </summary>
internal static class BoundedMinimizer
{
    private static readonly double GoldenStep = 0.5 * (3.0 - Math.Sqrt(5.0));
    private static readonly double SqrtEpsilon = Math.Sqrt(Math.BitIncrement(1.0) - 1.0);

    public readonly record struct Result(double X, double Value, int Iterations, bool Converged);

    /// <param name="tolerance">Absolute tolerance on x.</param>
    public static Result Minimize(Func<double, double> f, double lower, double upper, double tolerance, int maxIterations)
    {
        if (!(lower < upper))
        {
            throw new ArgumentOutOfRangeException(nameof(lower), $"Need lower < upper; got {lower}, {upper}.");
        }

        double a = lower, b = upper;
        var x = a + (GoldenStep * (b - a));
        double w = x, v = x;
        var fx = Sanitize(f(x));
        double fw = fx, fv = fx;
        double d = 0, e = 0;
        var iterations = 0;
        var converged = false;
        while (iterations < maxIterations)
        {
            var middle = 0.5 * (a + b);
            var tol1 = (SqrtEpsilon * Math.Abs(x)) + (tolerance / 3.0);
            var tol2 = 2.0 * tol1;
            if (Math.Abs(x - middle) <= tol2 - (0.5 * (b - a)))
            {
                converged = true;
                break;
            }

            iterations++;
            var parabolic = false;
            if (Math.Abs(e) > tol1)
            {
                // Parabola through (v, fv), (w, fw), (x, fx); accept its vertex only if it lies inside and the
                // step is less than half the step before last (Brent's safeguard).
                var r = (x - w) * (fx - fv);
                var q = (x - v) * (fx - fw);
                var p = ((x - v) * q) - ((x - w) * r);
                q = 2.0 * (q - r);
                if (q > 0)
                {
                    p = -p;
                }
                else
                {
                    q = -q;
                }

                var previous = e;
                e = d;
                if (Math.Abs(p) < Math.Abs(0.5 * q * previous) && p > q * (a - x) && p < q * (b - x))
                {
                    d = p / q;
                    var trial = x + d;
                    if (trial - a < tol2 || b - trial < tol2)
                    {
                        d = x < middle ? tol1 : -tol1;
                    }

                    parabolic = true;
                }
            }

            if (!parabolic)
            {
                e = (x < middle ? b : a) - x;
                d = GoldenStep * e;
            }

            var u = x + (Math.Abs(d) >= tol1 ? d : (d > 0 ? tol1 : -tol1));
            var fu = Sanitize(f(u));
            if (fu <= fx)
            {
                if (u < x)
                {
                    b = x;
                }
                else
                {
                    a = x;
                }

                (v, fv) = (w, fw);
                (w, fw) = (x, fx);
                (x, fx) = (u, fu);
            }
            else
            {
                if (u < x)
                {
                    a = u;
                }
                else
                {
                    b = u;
                }

                if (fu <= fw || w == x)
                {
                    (v, fv) = (w, fw);
                    (w, fw) = (u, fu);
                }
                else if (fu <= fv || v == x || v == w)
                {
                    (v, fv) = (u, fu);
                }
            }
        }

        // localmin never evaluates the ends; near one, compare with it.
        var near = 4.0 * ((SqrtEpsilon * Math.Abs(x)) + tolerance);
        foreach (var end in (ReadOnlySpan<double>)[lower, upper])
        {
            if (Math.Abs(x - end) <= near)
            {
                var fEnd = Sanitize(f(end));
                if (fEnd <= fx)
                {
                    (x, fx) = (end, fEnd);
                }
            }
        }

        return new Result(x, fx, iterations, converged);
    }

    // +∞ (an impossible answer at lapse 0) and NaN compare badly inside the parabola; treat both as "very large".
    private static double Sanitize(double value) => double.IsNaN(value) || value > double.MaxValue ? double.MaxValue : value;
}
