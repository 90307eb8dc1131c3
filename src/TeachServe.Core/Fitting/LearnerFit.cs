using MathNet.Numerics.Distributions;
using MathNet.Numerics.LinearAlgebra;
using MathNet.Numerics.Optimization;
using MathNet.Numerics.RootFinding;
using TeachServe.Core.Model;

namespace TeachServe.Core.Fitting;

/// <summary>
/// Fits the learner model's alpha and lapse (DESIGN 1, "fit") to recorded sessions by maximum likelihood under the
/// switching-learner hidden Markov model (Singla et al., ICML 2014, with lapses; DESIGN 2.2–2.3), and reports
/// profile-likelihood intervals. The search runs in log alpha and logit lapse: a coarse grid, then the Nelder–Mead
/// simplex from the best grid point; each profile point maximises over the other parameter with Brent's method.
/// </summary>
public static class LearnerFit
{
    // Logit lapse is searched above this (lapse ≈ 1.4e-11); a lapse of exactly 0 is reached by the profiles.
    private const double MinLogitLapse = -25.0;

    // The lowest non-zero lapse of the profile grid; the grid starts at lapse 0 itself.
    private const double LowestGridLapse = 0.002;

    private static readonly double[] StartAlphas = [0.2, 0.5, 1, 2, 4, 8, 16];
    private static readonly double[] StartLapses = [0.01, 0.05, 0.15, 0.3, 0.5];

    /// <summary>
    /// The log-likelihood (natural log) of all recorded answers for the given parameters: Σ over sessions of the
    /// forward algorithm, log P(a_1..a_T) = Σ_t log Σ_h β_{t−1}(h)·o(a_t|h,x_t). −∞ when an answer is impossible
    /// (possible only with lapse 0: no hypothesis gives it).
    /// </summary>
    /// <exception cref="ArgumentException">No sessions, no answers, or a step that does not fit the model version.</exception>
    public static double LogLikelihood(ModelVersion model, IReadOnlyList<RecordedSession> sessions, double alpha, double lapse)
    {
        CheckParameters(alpha, lapse);
        return new ForwardLikelihood(model, sessions).LogLikelihood(alpha, lapse);
    }

    /// <summary>χ²₁(confidence): the bound on 2·(ℓmax − ℓprofile) of a profile-likelihood interval (Wilks 1938).</summary>
    public static double ProfileThreshold(double confidence = 0.95)
    {
        if (!(confidence > 0 && confidence < 1))
        {
            throw new ArgumentOutOfRangeException(nameof(confidence), confidence, "Must lie strictly between 0 and 1.");
        }

        return ChiSquared.InvCDF(1.0, confidence);
    }

    /// <summary>Maximum-likelihood alpha and lapse with their profiles and profile-likelihood intervals.</summary>
    /// <exception cref="ArgumentException">No sessions, no answers, or a step that does not fit the model version.</exception>
    /// <exception cref="OperationCanceledException">The token was cancelled; checked at every likelihood evaluation.</exception>
    public static FitResult Fit(ModelVersion model, IReadOnlyList<RecordedSession> sessions, FitOptions? options = null, CancellationToken ct = default)
    {
        options ??= new FitOptions();
        options.Validate();
        var likelihood = new ForwardLikelihood(model, sessions);
        var search = new Search(likelihood, options, ct);

        var (alpha, lapse, best, converged) = search.Maximise();
        var alphaPoints = search.AlphaGrid().Select(search.ProfileAtAlpha).ToArray();
        var lapsePoints = search.LapseGrid().Select(search.ProfileAtLapse).ToArray();

        // A profile point can beat the simplex by a hair (or more, if the simplex stalled); the maximum is the best seen.
        foreach (var point in alphaPoints.Concat(lapsePoints))
        {
            if (point.LogLikelihood > best)
            {
                (alpha, lapse, best) = (point.Alpha, point.Lapse, point.LogLikelihood);
            }
        }

        var threshold = ProfileThreshold(options.Confidence);
        var alphaInterval = search.AlphaInterval(alphaPoints, alpha, best, threshold);
        var lapseInterval = search.LapseInterval(lapsePoints, lapse, best, threshold);
        return new FitResult
        {
            Alpha = alpha,
            Lapse = lapse,
            MaxLogLikelihood = best,
            AlphaProfile = new ParameterProfile("alpha", alphaPoints, alphaInterval),
            LapseProfile = new ParameterProfile("lapse", lapsePoints, lapseInterval),
            Confidence = options.Confidence,
            Threshold = threshold,
            SessionCount = likelihood.SessionCount,
            AnswerCount = likelihood.AnswerCount,
            Evaluations = likelihood.Evaluations,
            Converged = converged,
        };
    }

    private static void CheckParameters(double alpha, double lapse)
    {
        if (!(alpha > 0) || double.IsNaN(alpha))
        {
            throw new ArgumentOutOfRangeException(nameof(alpha), alpha, "Must be positive.");
        }

        if (!(lapse >= 0 && lapse <= 1))
        {
            throw new ArgumentOutOfRangeException(nameof(lapse), lapse, "Must lie in [0, 1].");
        }
    }

    private static double Logit(double p) => Math.Log(p / (1.0 - p));

    private static double Sigmoid(double v) => 1.0 / (1.0 + Math.Exp(-v));

    /// <summary>The maximisations of one fit, over one packed likelihood.</summary>
    private sealed class Search(ForwardLikelihood likelihood, FitOptions options, CancellationToken ct)
    {
        private readonly double _minLogAlpha = Math.Log(options.MinAlpha);
        private readonly double _maxLogAlpha = Math.Log(options.MaxAlpha);
        private readonly double _maxLogitLapse = Logit(options.MaxLapse);

        private double Ll(double alpha, double lapse) => likelihood.LogLikelihood(alpha, lapse, ct);

        public (double Alpha, double Lapse, double LogLikelihood, bool Converged) Maximise()
        {
            double bestAlpha = double.NaN, bestLapse = double.NaN, best = double.NegativeInfinity;
            foreach (var a in StartAlphas)
            {
                foreach (var l in StartLapses)
                {
                    var alpha = Math.Clamp(a, options.MinAlpha, options.MaxAlpha);
                    var lapse = Math.Min(l, options.MaxLapse);
                    var value = Ll(alpha, lapse);
                    if (value > best || double.IsNaN(bestAlpha))
                    {
                        (bestAlpha, bestLapse, best) = (alpha, lapse, value);
                    }
                }
            }

            // The simplex works on (log alpha, logit lapse), clamped to the box with a small quadratic pull back
            // into it; the best clamped point it evaluates is kept, so hitting the iteration limit still reports it.
            double Objective(Vector<double> p)
            {
                var u = Math.Clamp(p[0], _minLogAlpha, _maxLogAlpha);
                var v = Math.Clamp(p[1], MinLogitLapse, _maxLogitLapse);
                var alpha = Math.Exp(u);
                var lapse = Sigmoid(v);
                var value = Ll(alpha, lapse);
                if (value > best)
                {
                    (bestAlpha, bestLapse, best) = (alpha, lapse, value);
                }

                var outside = ((p[0] - u) * (p[0] - u)) + ((p[1] - v) * (p[1] - v));
                return double.IsNegativeInfinity(value) ? double.MaxValue : -value + outside;
            }

            var start = Vector<double>.Build.Dense([Math.Log(bestAlpha), Logit(bestLapse)]);
            var step = Vector<double>.Build.Dense([0.5, 0.5]);
            var simplex = new NelderMeadSimplex(options.SimplexTolerance, options.MaxSimplexIterations);
            var converged = true;
            try
            {
                simplex.FindMinimum(ObjectiveFunction.Value(Objective), start, step);
            }
            catch (MaximumIterationsException)
            {
                converged = false;
            }

            return (bestAlpha, bestLapse, best, converged);
        }

        public IEnumerable<double> AlphaGrid()
        {
            var n = options.ProfilePoints;
            for (var i = 0; i < n; i++)
            {
                yield return i == n - 1 ? options.MaxAlpha : Math.Exp(_minLogAlpha + ((_maxLogAlpha - _minLogAlpha) * i / (n - 1)));
            }
        }

        public IEnumerable<double> LapseGrid()
        {
            var n = options.ProfilePoints;
            var low = Logit(Math.Min(LowestGridLapse, options.MaxLapse / 2));
            yield return 0.0;
            for (var i = 0; i < n - 1; i++)
            {
                yield return i == n - 2 ? options.MaxLapse : Sigmoid(low + ((_maxLogitLapse - low) * i / (n - 2)));
            }
        }

        /// <summary>max over lapse ∈ [0, MaxLapse] at a fixed alpha.</summary>
        public ProfilePoint ProfileAtAlpha(double alpha)
        {
            var r = BoundedMinimizer.Minimize(l => -Ll(alpha, l), 0.0, options.MaxLapse, options.InnerTolerance, options.MaxInnerIterations);
            return new ProfilePoint(alpha, r.X, -r.Value);
        }

        /// <summary>max over log alpha ∈ [log MinAlpha, log MaxAlpha] at a fixed lapse.</summary>
        public ProfilePoint ProfileAtLapse(double lapse)
        {
            var r = BoundedMinimizer.Minimize(u => -Ll(Math.Exp(u), lapse), _minLogAlpha, _maxLogAlpha, options.InnerTolerance, options.MaxInnerIterations);
            return new ProfilePoint(Math.Exp(r.X), lapse, -r.Value);
        }

        public ProfileInterval AlphaInterval(ProfilePoint[] grid, double alpha, double best, double threshold)
        {
            var coordinates = grid.Select(p => Math.Log(p.Alpha)).ToArray();
            var deviances = grid.Select(p => Deviance(best, p.LogLikelihood)).ToArray();
            double DevianceAt(double u) => Deviance(best, ProfileAtAlpha(Math.Exp(u)).LogLikelihood);
            var (low, lowOpen) = Crossing(coordinates, deviances, Math.Log(alpha), -1, _minLogAlpha, threshold, DevianceAt);
            var (high, highOpen) = Crossing(coordinates, deviances, Math.Log(alpha), +1, _maxLogAlpha, threshold, DevianceAt);
            return new ProfileInterval(Math.Exp(low), Math.Min(options.MaxAlpha, Math.Exp(high)), lowOpen, highOpen);
        }

        public ProfileInterval LapseInterval(ProfilePoint[] grid, double lapse, double best, double threshold)
        {
            var coordinates = grid.Select(p => p.Lapse).ToArray();
            var deviances = grid.Select(p => Deviance(best, p.LogLikelihood)).ToArray();
            double DevianceAt(double l) => Deviance(best, ProfileAtLapse(l).LogLikelihood);
            var (low, lowOpen) = Crossing(coordinates, deviances, lapse, -1, 0.0, threshold, DevianceAt);
            var (high, highOpen) = Crossing(coordinates, deviances, lapse, +1, options.MaxLapse, threshold, DevianceAt);
            return new ProfileInterval(Math.Max(0.0, low), high, lowOpen, highOpen);
        }

        private static double Deviance(double best, double profile) =>
            double.IsNegativeInfinity(profile) ? double.PositiveInfinity : Math.Max(0.0, 2.0 * (best - profile));

        /// <summary>
        /// Walks the grid from the estimate in <paramref name="direction"/> to the first point whose deviance
        /// exceeds the threshold, then finds the crossing between it and the last point inside by Brent's root
        /// finder on the profile itself (linear interpolation of the two grid deviances if that fails). No such
        /// point: the interval runs to the end of the range and is open there.
        /// </summary>
        private (double End, bool Open) Crossing(double[] coordinates, double[] deviances, double estimate, int direction, double limit, double threshold, Func<double, double> devianceAt)
        {
            double insideX = estimate, insideD = 0.0;
            var n = coordinates.Length;
            for (var k = 0; k < n; k++)
            {
                var i = direction > 0 ? k : n - 1 - k;
                var x = coordinates[i];
                if (direction > 0 ? x <= estimate : x >= estimate)
                {
                    continue;
                }

                var d = deviances[i];
                if (d <= threshold)
                {
                    (insideX, insideD) = (x, d);
                    continue;
                }

                var lo = Math.Min(insideX, x);
                var hi = Math.Max(insideX, x);
                if (Brent.TryFindRoot(t => devianceAt(t) - threshold, lo, hi, options.CrossingTolerance, options.MaxCrossingIterations, out var root))
                {
                    return (root, false);
                }

                var share = double.IsPositiveInfinity(d) ? 0.0 : (threshold - insideD) / (d - insideD);
                return (insideX + (share * (x - insideX)), false);
            }

            return (limit, true);
        }
    }
}
