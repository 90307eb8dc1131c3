using MathNet.Numerics.LinearAlgebra;
using MathNet.Numerics.Optimization;

namespace TeachServe.Core.Hypotheses;

/// <summary>
/// Multinomial logistic regression (softmax, one weight row per class, L2 penalty) fitted with MathNet's BFGS.
/// For two classes it is ordinary logistic regression with a redundant second row.
/// </summary>
public static class LogisticFit
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

        // The same sums in the same order as a vector-indexed objective, on a plain copy of the point: MathNet's
        // indexer is a virtual call per read, which was most of the fit's time.
        var p = new double[k * d];
        (double, Vector<double>) Objective(Vector<double> point)
        {
            for (var t = 0; t < p.Length; t++)
            {
                p[t] = point[t];
            }

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
