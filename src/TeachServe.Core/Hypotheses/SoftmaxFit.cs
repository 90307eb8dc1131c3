using MathNet.Numerics.LinearAlgebra;
using Simd = System.Numerics.Vector;

namespace TeachServe.Core.Hypotheses;

/// <summary>
/// The same multinomial logistic objective as <see cref="LogisticFit"/> (softmax, one weight row per class with
/// intercept, L2 penalty ridge·n/2·‖w‖² on every weight), minimised by Newton's method with the exact Hessian
/// when there are few weights and by L-BFGS otherwise (Nocedal &amp; Wright, "Numerical Optimization", 2nd ed.,
/// 2006, Algorithms 3.1 and 7.4), both with backtracking (Armijo) line searches. The penalty makes the objective
/// strictly convex, so both reach the one minimum; sums run over feature columns with SIMD across items.
/// </summary>
public static class SoftmaxFit
{
    /// <summary>Newton's method up to this many weights (the Hessian is p × p and costs n·p² per iteration).</summary>
    public const int NewtonLimit = 160;

    /// <summary>Stop when every gradient component is below this times the item count (a per-item average).</summary>
    public const double GradientTolerance = 1e-7;

    /// <summary>Returns weights [class][feature], the last column being the intercept, as <see cref="LogisticFit.Fit"/>.</summary>
    public static double[][] Fit(FeatureColumns x, int[] labels, int labelCount, int[]? featureSubset = null, double ridge = 1e-3, int maxIterations = 300)
    {
        var features = featureSubset ?? Enumerable.Range(0, x.Width).ToArray();
        var problem = new Problem(x, labels, labelCount, features, ridge);
        var solution = problem.Size <= NewtonLimit ? problem.Newton(maxIterations) : problem.LimitedMemoryBfgs(maxIterations, memory: 10);
        var weights = new double[labelCount][];
        var d = features.Length + 1;
        for (var c = 0; c < labelCount; c++)
        {
            weights[c] = new double[x.Width + 1];
            for (var j = 0; j < features.Length; j++)
            {
                weights[c][features[j]] = solution[(c * d) + j];
            }

            weights[c][x.Width] = solution[(c * d) + d - 1];
        }

        return weights;
    }

    /// <summary>The objective's gradient at weights [class][feature + intercept] (full width), for tests of optimality.</summary>
    public static double[] Gradient(FeatureColumns x, int[] labels, double[][] weights, double ridge = 1e-3)
    {
        var k = weights.Length;
        var problem = new Problem(x, labels, k, Enumerable.Range(0, x.Width).ToArray(), ridge);
        var p = new double[problem.Size];
        for (var c = 0; c < k; c++)
        {
            weights[c].CopyTo(p, c * (x.Width + 1));
        }

        var gradient = new double[problem.Size];
        problem.Evaluate(p, gradient);
        return gradient;
    }

    private sealed class Problem
    {
        private readonly ReadOnlyMemory<double>[] _columns;
        private readonly int[] _labels;
        private readonly int _k;
        private readonly int _d;
        private readonly int _n;
        private readonly double _ridge;
        private readonly double[][] _probability;

        public Problem(FeatureColumns x, int[] labels, int k, int[] features, double ridge)
        {
            _n = x.Count;
            _k = k;
            _d = features.Length + 1;
            _labels = labels;
            _ridge = ridge * _n;
            _columns = features.Select(j => new ReadOnlyMemory<double>(x.Column(j).ToArray())).ToArray();
            _probability = Enumerable.Range(0, k).Select(_ => new double[_n]).ToArray();
        }

        public int Size => _k * _d;

        /// <summary>Loss at <paramref name="p"/>; fills the gradient, and leaves class probabilities in _probability.</summary>
        public double Evaluate(ReadOnlySpan<double> p, Span<double> gradient)
        {
            for (var c = 0; c < _k; c++)
            {
                var s = _probability[c].AsSpan();
                s.Fill(p[(c * _d) + _d - 1]);
                for (var j = 0; j < _d - 1; j++)
                {
                    AddScaled(s, p[(c * _d) + j], _columns[j].Span);
                }
            }

            var loss = 0.0;
            for (var i = 0; i < _n; i++)
            {
                var max = double.NegativeInfinity;
                for (var c = 0; c < _k; c++)
                {
                    max = Math.Max(max, _probability[c][i]);
                }

                var z = 0.0;
                for (var c = 0; c < _k; c++)
                {
                    var e = Math.Exp(_probability[c][i] - max);
                    _probability[c][i] = e;
                    z += e;
                }

                loss -= Math.Log(_probability[_labels[i]][i] / z);
                for (var c = 0; c < _k; c++)
                {
                    _probability[c][i] /= z;
                }
            }

            for (var c = 0; c < _k; c++)
            {
                // Residual r = P − 1[y = c], kept in a scratch copy so the probabilities stay for the Hessian.
                var residual = Residual(c);
                for (var j = 0; j < _d - 1; j++)
                {
                    gradient[(c * _d) + j] = Dot(residual, _columns[j].Span);
                }

                var sum = 0.0;
                foreach (var r in residual)
                {
                    sum += r;
                }

                gradient[(c * _d) + _d - 1] = sum;
            }

            for (var t = 0; t < Size; t++)
            {
                loss += 0.5 * _ridge * p[t] * p[t];
                gradient[t] += _ridge * p[t];
            }

            return loss;
        }

        private double[]? _residual;

        private double[] Residual(int c)
        {
            _residual ??= new double[_n];
            _probability[c].CopyTo(_residual, 0);
            for (var i = 0; i < _n; i++)
            {
                if (_labels[i] == c)
                {
                    _residual[i] -= 1.0;
                }
            }

            return _residual;
        }

        /// <summary>Newton steps with the exact Hessian Σ_i (diag(P_i) − P_i P_iᵀ) ⊗ x_i x_iᵀ + ridge·I.</summary>
        public double[] Newton(int maxIterations)
        {
            var p = new double[Size];
            var gradient = new double[Size];
            var trial = new double[Size];
            var trialGradient = new double[Size];
            var loss = Evaluate(p, gradient);
            var hessian = Matrix<double>.Build.Dense(Size, Size);
            var row = new double[_d];
            for (var iteration = 0; iteration < maxIterations && !Converged(gradient); iteration++)
            {
                hessian.Clear();
                var h = hessian.AsColumnMajorArray();
                for (var i = 0; i < _n; i++)
                {
                    for (var j = 0; j < _d - 1; j++)
                    {
                        row[j] = _columns[j].Span[i];
                    }

                    row[_d - 1] = 1.0;
                    for (var c = 0; c < _k; c++)
                    {
                        var pc = _probability[c][i];
                        for (var e = c; e < _k; e++)
                        {
                            var factor = c == e ? pc * (1 - pc) : -pc * _probability[e][i];
                            for (var a = 0; a < _d; a++)
                            {
                                var fa = factor * row[a];
                                var column = ((e * _d) + 0) * Size;
                                for (var b = 0; b < _d; b++)
                                {
                                    h[column + (b * Size) + (c * _d) + a] += fa * row[b];
                                }
                            }
                        }
                    }
                }

                // Only blocks with e ≥ c were filled (rows of class c, columns of class e); mirror them.
                for (var a = 0; a < Size; a++)
                {
                    for (var b = a + 1; b < Size; b++)
                    {
                        h[(a * Size) + b] = h[(b * Size) + a];
                    }

                    h[(a * Size) + a] += _ridge;
                }

                var direction = hessian.Cholesky().Solve(Vector<double>.Build.DenseOfArray(gradient)).AsArray()
                    ?? throw new InvalidOperationException("Cholesky solve returned no dense vector.");
                if (!LineSearch(p, loss, gradient, direction, -1.0, trial, trialGradient, out loss))
                {
                    break;
                }
            }

            return p;
        }

        /// <summary>L-BFGS with the two-loop recursion and the initial scaling sᵀy/yᵀy (Nocedal &amp; Wright 2006, 7.20).</summary>
        public double[] LimitedMemoryBfgs(int maxIterations, int memory)
        {
            var p = new double[Size];
            var gradient = new double[Size];
            var trial = new double[Size];
            var trialGradient = new double[Size];
            var previous = new double[Size];
            var previousGradient = new double[Size];
            var s = new List<double[]>();
            var y = new List<double[]>();
            var rho = new List<double>();
            var direction = new double[Size];
            var alpha = new double[memory];
            var loss = Evaluate(p, gradient);
            for (var iteration = 0; iteration < maxIterations && !Converged(gradient); iteration++)
            {
                gradient.CopyTo(direction, 0);
                for (var m = s.Count - 1; m >= 0; m--)
                {
                    alpha[m] = rho[m] * Dot(s[m], direction);
                    AddScaled(direction, -alpha[m], y[m]);
                }

                var gamma = s.Count == 0 ? 1.0 / Math.Max(1.0, Math.Sqrt(Dot(gradient, gradient))) : Dot(s[^1], y[^1]) / Dot(y[^1], y[^1]);
                for (var t = 0; t < Size; t++)
                {
                    direction[t] *= gamma;
                }

                for (var m = 0; m < s.Count; m++)
                {
                    var beta = rho[m] * Dot(y[m], direction);
                    AddScaled(direction, alpha[m] - beta, s[m]);
                }

                p.CopyTo(previous, 0);
                gradient.CopyTo(previousGradient, 0);
                if (!LineSearch(p, loss, gradient, direction, -1.0, trial, trialGradient, out loss))
                {
                    if (s.Count == 0)
                    {
                        break;
                    }

                    // A poor quasi-Newton direction: forget the curvature pairs and retry along the gradient.
                    s.Clear();
                    y.Clear();
                    rho.Clear();
                    continue;
                }

                var sk = new double[Size];
                var yk = new double[Size];
                for (var t = 0; t < Size; t++)
                {
                    sk[t] = p[t] - previous[t];
                    yk[t] = gradient[t] - previousGradient[t];
                }

                var sy = Dot(sk, yk);
                if (sy > 1e-12 * Math.Sqrt(Dot(sk, sk) * Dot(yk, yk)))
                {
                    if (s.Count == memory)
                    {
                        s.RemoveAt(0);
                        y.RemoveAt(0);
                        rho.RemoveAt(0);
                    }

                    s.Add(sk);
                    y.Add(yk);
                    rho.Add(1.0 / sy);
                }
            }

            return p;
        }

        private bool Converged(ReadOnlySpan<double> gradient)
        {
            var limit = GradientTolerance * _n;
            foreach (var g in gradient)
            {
                if (!(Math.Abs(g) <= limit))
                {
                    return false;
                }
            }

            return true;
        }

        /// <summary>
        /// Backtracking from step 1 along sign·direction until the Armijo condition with c₁ = 1e-4 holds; on success
        /// p, gradient and loss hold the new point. False when no step of at least 2⁻⁴⁰ decreases the loss.
        /// </summary>
        private bool LineSearch(double[] p, double loss, double[] gradient, double[] direction, double sign, double[] trial, double[] trialGradient, out double newLoss)
        {
            var slope = sign * Dot(gradient, direction);
            if (!(slope < 0))
            {
                newLoss = loss;
                return false;
            }

            for (var step = 1.0; step > 1e-12; step *= 0.5)
            {
                for (var t = 0; t < Size; t++)
                {
                    trial[t] = p[t] + (sign * step * direction[t]);
                }

                var value = Evaluate(trial, trialGradient);
                if (value <= loss + (1e-4 * step * slope))
                {
                    trial.CopyTo(p, 0);
                    trialGradient.CopyTo(gradient, 0);
                    newLoss = value;
                    return true;
                }
            }

            // Leave the probabilities of the current point in place for the caller's next Hessian.
            Evaluate(p, gradient);
            newLoss = loss;
            return false;
        }
    }

    private static void AddScaled(Span<double> target, double factor, ReadOnlySpan<double> source)
    {
        var lanes = System.Numerics.Vector<double>.Count;
        var f = new System.Numerics.Vector<double>(factor);
        var i = 0;
        for (; i + lanes <= target.Length; i += lanes)
        {
            (new System.Numerics.Vector<double>(target[i..]) + (f * new System.Numerics.Vector<double>(source[i..]))).CopyTo(target[i..]);
        }

        for (; i < target.Length; i++)
        {
            target[i] += factor * source[i];
        }
    }

    private static double Dot(ReadOnlySpan<double> a, ReadOnlySpan<double> b)
    {
        var lanes = System.Numerics.Vector<double>.Count;
        var sum = System.Numerics.Vector<double>.Zero;
        var i = 0;
        for (; i + lanes <= a.Length; i += lanes)
        {
            sum += new System.Numerics.Vector<double>(a[i..]) * new System.Numerics.Vector<double>(b[i..]);
        }

        var total = Simd.Sum(sum);
        for (; i < a.Length; i++)
        {
            total += a[i] * b[i];
        }

        return total;
    }
}
