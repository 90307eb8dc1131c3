using MathNet.Numerics.LinearAlgebra;
using MathNet.Numerics.Optimization;

namespace TeachServe.Core.Hypotheses;

/// <summary>
/// The linear family and logistic fit as they were before the compile-speed work (commit 7b0f518), kept verbatim
/// so that tests and the compile benchmark can compare the fast code path with it (DEVELOPERS: a plain reference
/// beside each fast path).
/// </summary>
internal static class ReferenceLinearFamily
{
    private static readonly double[] PerturbationScales = [0.05, 0.15, 0.3, 0.6, 1.0];

    public static void Generate(FamilyInput input, HypothesisPool pool)
    {
        var (names, rows) = input.StandardisedFeatures();
        var d = names.Length;
        var k = input.LabelCount;
        var settings = input.Settings;
        var random = new SeededRandom((ulong)settings.Seed);
        var bias = settings.SimplicityBias;
        double Weight(int complexity) => Math.Pow(bias, -(complexity - 1));

        var fitted = ReferenceLogisticFit.Fit(rows, input.Labels, k);
        pool.Add(ReferenceLogisticFit.Predict(rows, fitted), Weight(d));

        var norm = Math.Sqrt(fitted.Sum(r => r.Sum(v => v * v)) / k);
        foreach (var scale in PerturbationScales)
        {
            for (var copy = 0; copy < settings.PerturbedCopies; copy++)
            {
                var w = fitted.Select(r => r.Select(v => v + (scale * norm * random.NextGaussian())).ToArray()).ToArray();
                pool.Add(ReferenceLogisticFit.Predict(rows, w), Weight(d));
            }
        }

        // Cues: rules that look at one feature or a pair only, the shortcuts annotators tend to take.
        var subsets = new List<int[]>();
        for (var j = 0; j < d; j++)
        {
            subsets.Add([j]);
        }

        for (var j = 0; j < d; j++)
        {
            for (var l = j + 1; l < d; l++)
            {
                subsets.Add([j, l]);
            }
        }

        foreach (var subset in subsets)
        {
            if (k == 2)
            {
                AddSignedCues(rows, input.Labels, subset, pool, Weight(subset.Length));
            }
            else
            {
                var w = ReferenceLogisticFit.Fit(rows, input.Labels, k, subset);
                pool.Add(ReferenceLogisticFit.Predict(rows, w), Weight(subset.Length));
                foreach (var scale in PerturbationScales)
                {
                    var perturbed = w.Select(r => r.Select((v, idx) => idx == r.Length - 1 || subset.Contains(idx) ? v + (scale * random.NextGaussian()) : v).ToArray()).ToArray();
                    pool.Add(ReferenceLogisticFit.Predict(rows, perturbed), Weight(subset.Length));
                }
            }
        }

        var classShare = Enumerable.Range(0, k).Select(c => (double)input.Labels.Count(l => l == c) / input.ItemCount).ToArray();
        for (var r = 0; r < settings.RandomDirections; r++)
        {
            var w = new double[k][];
            for (var c = 0; c < k; c++)
            {
                w[c] = new double[d + 1];
                for (var j = 0; j < d; j++)
                {
                    w[c][j] = random.NextGaussian();
                }
            }

            if (k == 2)
            {
                // Offset so that the rule calls as many items class 1 as the truth does.
                var scores = rows.Select(x => Score(w[1], x) - Score(w[0], x)).Order().ToArray();
                var cut = (int)Math.Round((1.0 - classShare[1]) * (scores.Length - 1));
                w[1][d] = -scores[Math.Clamp(cut, 0, scores.Length - 1)];
            }
            else
            {
                w = BalanceOffsets(rows, w, classShare);
            }

            pool.Add(ReferenceLogisticFit.Predict(rows, w), Weight(d));
        }
    }

    private static void AddSignedCues(double[][] rows, int[] labels, int[] subset, HypothesisPool pool, double weight)
    {
        var signs = 1 << subset.Length;
        var positiveShare = (double)labels.Count(l => l == 1) / labels.Length;
        double[] quantiles = [1.0 - positiveShare, 0.25, 0.5, 0.75];
        for (var pattern = 0; pattern < signs; pattern++)
        {
            var scores = rows.Select(x =>
            {
                var s = 0.0;
                for (var t = 0; t < subset.Length; t++)
                {
                    s += ((pattern >> t) & 1) == 1 ? -x[subset[t]] : x[subset[t]];
                }

                return s;
            }).ToArray();
            var sorted = scores.Order().ToArray();
            foreach (var quantile in quantiles)
            {
                var threshold = sorted[Math.Clamp((int)Math.Round(quantile * (sorted.Length - 1)), 0, sorted.Length - 1)];
                pool.Add(scores.Select(s => s > threshold ? (byte)1 : (byte)0).ToArray(), weight);
            }
        }
    }

    private static double Score(double[] w, double[] x)
    {
        var s = w[^1];
        for (var j = 0; j < x.Length; j++)
        {
            s += w[j] * x[j];
        }

        return s;
    }

    /// <summary>A few rounds of nudging intercepts so that predicted class shares approach the true shares.</summary>
    private static double[][] BalanceOffsets(double[][] rows, double[][] w, double[] share)
    {
        for (var round = 0; round < 20; round++)
        {
            var predictions = ReferenceLogisticFit.Predict(rows, w);
            for (var c = 0; c < w.Length; c++)
            {
                var predictedShare = (double)predictions.Count(p => p == c) / predictions.Length;
                w[c][^1] += 0.5 * (share[c] - predictedShare);
            }
        }

        return w;
    }
}

/// <summary>The multinomial logistic fit before the compile-speed work (MathNet BFGS on a vector-indexed objective).</summary>
internal static class ReferenceLogisticFit
{
    /// <summary>Returns weights [class][feature], the last column being the intercept.</summary>
    public static double[][] Fit(double[][] rows, int[] labels, int labelCount, int[]? featureSubset = null, double ridge = 1e-3)
    {
        var features = featureSubset ?? Enumerable.Range(0, rows.Length == 0 ? 0 : rows[0].Length).ToArray();
        var d = features.Length + 1;
        var k = labelCount;
        var n = rows.Length;
        var design = new double[n][];
        for (var i = 0; i < n; i++)
        {
            design[i] = new double[d];
            for (var j = 0; j < features.Length; j++)
            {
                design[i][j] = rows[i][features[j]];
            }

            design[i][d - 1] = 1.0;
        }

        (double, Vector<double>) Objective(Vector<double> p)
        {
            var grad = new double[k * d];
            var loss = 0.0;
            var scores = new double[k];
            for (var i = 0; i < n; i++)
            {
                var max = double.NegativeInfinity;
                for (var c = 0; c < k; c++)
                {
                    var s = 0.0;
                    for (var j = 0; j < d; j++)
                    {
                        s += p[(c * d) + j] * design[i][j];
                    }

                    scores[c] = s;
                    max = Math.Max(max, s);
                }

                var z = 0.0;
                for (var c = 0; c < k; c++)
                {
                    scores[c] = Math.Exp(scores[c] - max);
                    z += scores[c];
                }

                loss -= Math.Log(scores[labels[i]] / z);
                for (var c = 0; c < k; c++)
                {
                    var r = (scores[c] / z) - (c == labels[i] ? 1.0 : 0.0);
                    for (var j = 0; j < d; j++)
                    {
                        grad[(c * d) + j] += r * design[i][j];
                    }
                }
            }

            for (var t = 0; t < k * d; t++)
            {
                loss += 0.5 * ridge * n * p[t] * p[t];
                grad[t] += ridge * n * p[t];
            }

            return (loss, Vector<double>.Build.DenseOfArray(grad));
        }

        var start = Vector<double>.Build.Dense(k * d);
        Vector<double> solution;
        try
        {
            var result = new BfgsMinimizer(1e-6, 1e-8, 1e-10, 500).FindMinimum(ObjectiveFunction.Gradient(Objective), start);
            solution = result.MinimizingPoint;
        }
        catch (Exception ex) when (ex is not OperationCanceledException)
        {
            // BFGS can stop on its iteration limit or a failed line search (MathNet throws then);
            // plain gradient descent on the same convex objective is slower but always ends somewhere useful.
            solution = start;
            var step = 1.0 / Math.Max(1, n);
            for (var iteration = 0; iteration < 2000; iteration++)
            {
                var (_, gradient) = Objective(solution);
                solution -= step * gradient;
            }
        }

        var weights = new double[k][];
        var fullWidth = (rows.Length == 0 ? 0 : rows[0].Length) + 1;
        for (var c = 0; c < k; c++)
        {
            weights[c] = new double[fullWidth];
            for (var j = 0; j < features.Length; j++)
            {
                weights[c][features[j]] = solution[(c * d) + j];
            }

            weights[c][fullWidth - 1] = solution[(c * d) + d - 1];
        }

        return weights;
    }

    /// <summary>Predicted class (argmax score) of every row under weights [class][feature + intercept].</summary>
    public static byte[] Predict(double[][] rows, double[][] weights)
    {
        var predictions = new byte[rows.Length];
        for (var i = 0; i < rows.Length; i++)
        {
            var best = 0;
            var bestScore = double.NegativeInfinity;
            for (var c = 0; c < weights.Length; c++)
            {
                var w = weights[c];
                var s = w[^1];
                for (var j = 0; j < rows[i].Length; j++)
                {
                    s += w[j] * rows[i][j];
                }

                if (s > bestScore)
                {
                    bestScore = s;
                    best = c;
                }
            }

            predictions[i] = (byte)best;
        }

        return predictions;
    }
}
