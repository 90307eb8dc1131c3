using MathNet.Numerics.LinearAlgebra;
using TeachServe.Core.Model;

namespace TeachServe.Core.Hypotheses;

/// <summary>
/// Linear rules for projects with many features or more than two labels, where random directions are nearly all
/// far from the truth: rules are generated where learners plausibly are.
/// <list type="bullet">
/// <item>the fitted target (<see cref="SoftmaxFit"/>) and copies of it perturbed by a relative amount: in all
/// features, in the span of the items' leading principal directions, and in the span of the fitted class
/// directions (each class row moves by scale·‖row‖ in expectation, whatever the dimension);</item>
/// <item>confusions between two labels: the target's rule with the boundary between labels a and b shifted (or
/// removed), changing only which of a and b an item gets;</item>
/// <item>rules on one or two of the most informative features (correlation ratio η², largest first);</item>
/// <item>random directions with class-balanced offsets, as many as the settings ask for (they stand for
/// learners who guess).</item>
/// </list>
/// </summary>
public static class WideLinearFamily
{
    /// <summary>Leading principal directions spanning the perturbations of the target.</summary>
    public const int PrincipalDirections = 8;

    /// <summary>Most informative features that one- and two-feature rules may use.</summary>
    public const int CueFeatures = 8;

    /// <summary>Boundary shifts of one-vs-one confusions, in standard deviations of the pair's score margin.</summary>
    private static readonly double[] PairShifts = [-1.0, -0.5, -0.2, 0.2, 0.5, 1.0, double.NegativeInfinity, double.PositiveInfinity];

    internal static void Generate(FamilyInput input, HypothesisPool pool, CompileProgressReporter progress, double[][] rows, FeatureColumns columns, double[] scales)
    {
        var d = columns.Width;
        var k = input.LabelCount;
        var n = columns.Count;
        var labels = input.Labels;
        var settings = input.Settings;
        var random = new SeededRandom((ulong)settings.Seed);
        double Weight(int complexity) => Math.Pow(settings.SimplicityBias, -(complexity - 1));

        progress.Begin("target fit", CompileSteps.Hypotheses, 0.02);
        var fitted = SoftmaxFit.Fit(columns, labels, k);
        var target = columns.Predict(fitted);
        pool.Add(target, Weight(d));

        progress.Begin("principal directions", CompileSteps.Hypotheses, 0.3);
        var principal = PrincipalBasis(columns, Math.Min(PrincipalDirections, d));
        var fittedBasis = FittedBasis(fitted, d);

        progress.Begin("perturbed copies", CompileSteps.Hypotheses, 0.35);
        foreach (var basis in new Matrix<double>?[] { null, principal, fittedBasis })
        {
            foreach (var scale in scales)
            {
                for (var copy = 0; copy < settings.PerturbedCopies; copy++)
                {
                    pool.Add(columns.Predict(Perturb(fitted, basis, scale, random)), Weight(d));
                }
            }
        }

        progress.Begin("label confusions", CompileSteps.Hypotheses, 0.5);
        AddPairConfusions(columns, fitted, target, pool, Weight(d));

        progress.Begin("cues", CompileSteps.Hypotheses, 0.55);
        var top = Informative(columns, labels, k).Take(Math.Min(CueFeatures, d)).Order().ToArray();
        var subsets = top.Select(j => new[] { j }).Concat(
            top.SelectMany((j, a) => top.Skip(a + 1).Select(l => new[] { j, l }))).ToList();
        foreach (var subset in subsets)
        {
            if (k == 2)
            {
                LinearFamily.AddSignedCues(rows, labels, subset, pool, Weight(subset.Length));
                continue;
            }

            var w = SoftmaxFit.Fit(columns, labels, k, subset);
            pool.Add(columns.Predict(w), Weight(subset.Length));
            foreach (var scale in scales)
            {
                var perturbed = w.Select(r => r.Select((v, idx) => idx == d || subset.Contains(idx) ? v + (scale * random.NextGaussian()) : v).ToArray()).ToArray();
                pool.Add(columns.Predict(perturbed), Weight(subset.Length));
            }
        }

        progress.Begin("random directions", CompileSteps.Hypotheses, 0.8);
        var share = Enumerable.Range(0, k).Select(c => (double)labels.Count(l => l == c) / n).ToArray();
        var scores = Enumerable.Range(0, k).Select(_ => new double[n]).ToArray();
        for (var r = 0; r < settings.RandomDirections; r++)
        {
            progress.Report(CompileSteps.Hypotheses, 0.8 + (0.2 * r / settings.RandomDirections));
            var w = new double[k][];
            for (var c = 0; c < k; c++)
            {
                w[c] = new double[d + 1];
                for (var j = 0; j < d; j++)
                {
                    w[c][j] = random.NextGaussian();
                }

                columns.Score(w[c], scores[c]);
            }

            pool.Add(BalancedArgMax(scores, share), Weight(d));
        }
    }

    /// <summary>
    /// Orthonormal leading eigenvectors (as columns, d × r) of the items' covariance (features are standardised,
    /// so their mean is 0): the principal directions, ordered by variance.
    /// </summary>
    public static Matrix<double> PrincipalBasis(FeatureColumns columns, int r)
    {
        var d = columns.Width;
        var covariance = Matrix<double>.Build.Dense(d, d);
        for (var a = 0; a < d; a++)
        {
            for (var b = a; b < d; b++)
            {
                var v = columns.Dot(a, b) / Math.Max(1, columns.Count - 1);
                covariance[a, b] = v;
                covariance[b, a] = v;
            }
        }

        // MathNet returns the eigenvalues of a symmetric matrix in ascending order.
        var evd = covariance.Evd(MathNet.Numerics.LinearAlgebra.Symmetricity.Symmetric);
        var basis = Matrix<double>.Build.Dense(d, r);
        for (var t = 0; t < r; t++)
        {
            basis.SetColumn(t, evd.EigenVectors.Column(d - 1 - t));
        }

        return basis;
    }

    /// <summary>An orthonormal basis (d × rank) of the span of the fitted class rows, centred over classes.</summary>
    public static Matrix<double> FittedBasis(double[][] fitted, int d)
    {
        var k = fitted.Length;
        var rows = Matrix<double>.Build.Dense(d, k);
        for (var c = 0; c < k; c++)
        {
            for (var j = 0; j < d; j++)
            {
                rows[j, c] = fitted[c][j] - fitted.Average(w => w[j]);
            }
        }

        var svd = rows.Svd(computeVectors: true);
        var largest = svd.S.Count == 0 ? 0 : svd.S[0];
        var rank = svd.S.Count(s => s > 1e-9 * largest);
        return svd.U.SubMatrix(0, d, 0, Math.Max(1, rank));
    }

    /// <summary>
    /// Each class row plus scale·‖row‖·(noise of unit expected norm): Gaussian in the columns of
    /// <paramref name="basis"/> (all features when null); the intercept moves by scale·|intercept| as well.
    /// </summary>
    private static double[][] Perturb(double[][] w, Matrix<double>? basis, double scale, SeededRandom random)
    {
        var d = w[0].Length - 1;
        var result = new double[w.Length][];
        for (var c = 0; c < w.Length; c++)
        {
            var row = w[c];
            var norm = Math.Sqrt(row.Take(d).Sum(v => v * v));
            var copy = (double[])row.Clone();
            if (basis is null)
            {
                for (var j = 0; j < d; j++)
                {
                    copy[j] += scale * norm * random.NextGaussian() / Math.Sqrt(d);
                }
            }
            else
            {
                var r = basis.ColumnCount;
                for (var t = 0; t < r; t++)
                {
                    var g = scale * norm * random.NextGaussian() / Math.Sqrt(r);
                    for (var j = 0; j < d; j++)
                    {
                        copy[j] += g * basis[j, t];
                    }
                }
            }

            copy[d] += scale * Math.Abs(row[d]) * random.NextGaussian();
            result[c] = copy;
        }

        return result;
    }

    /// <summary>
    /// For each pair of labels a &lt; b: the target's predictions, with the items it calls a or b relabelled by the
    /// sign of their score margin s_a − s_b plus a shift (± infinity: all of them a, or all b).
    /// </summary>
    internal static void AddPairConfusions(FeatureColumns columns, double[][] fitted, byte[] target, HypothesisPool pool, double weight)
    {
        var k = fitted.Length;
        var n = columns.Count;
        var scores = Enumerable.Range(0, k).Select(c =>
        {
            var s = new double[n];
            columns.Score(fitted[c], s);
            return s;
        }).ToArray();
        for (var a = 0; a < k; a++)
        {
            for (var b = a + 1; b < k; b++)
            {
                var members = Enumerable.Range(0, n).Where(i => target[i] == a || target[i] == b).ToArray();
                if (members.Length == 0)
                {
                    continue;
                }

                var margins = members.Select(i => scores[a][i] - scores[b][i]).ToArray();
                var mean = margins.Average();
                var sd = Math.Sqrt(margins.Sum(m => (m - mean) * (m - mean)) / margins.Length);
                foreach (var shift in PairShifts)
                {
                    var predictions = (byte[])target.Clone();
                    for (var t = 0; t < members.Length; t++)
                    {
                        predictions[members[t]] = margins[t] + (shift * sd) > 0 ? (byte)a : (byte)b;
                    }

                    pool.Add(predictions, weight);
                }
            }
        }
    }

    /// <summary>Features by correlation ratio η² (between-class share of variance), largest first, ties by index.</summary>
    internal static IEnumerable<int> Informative(FeatureColumns columns, int[] labels, int k)
    {
        var eta = new double[columns.Width];
        for (var j = 0; j < columns.Width; j++)
        {
            var x = columns.Column(j);
            var sum = new double[k];
            var count = new int[k];
            var total = 0.0;
            var squares = 0.0;
            for (var i = 0; i < x.Length; i++)
            {
                sum[labels[i]] += x[i];
                count[labels[i]]++;
                total += x[i];
                squares += x[i] * x[i];
            }

            var mean = total / x.Length;
            var between = 0.0;
            for (var c = 0; c < k; c++)
            {
                if (count[c] > 0)
                {
                    between += count[c] * Math.Pow((sum[c] / count[c]) - mean, 2);
                }
            }

            var variance = squares - (x.Length * mean * mean);
            eta[j] = variance > 1e-12 ? between / variance : 0.0;
        }

        return Enumerable.Range(0, columns.Width).OrderByDescending(j => eta[j]).ThenBy(j => j);
    }

    /// <summary>
    /// Argmax of scores plus per-class offsets, the offsets nudged for 20 rounds so that predicted class shares
    /// approach the true shares (as the low-dimensional family does, on scores computed once).
    /// </summary>
    private static byte[] BalancedArgMax(double[][] scores, double[] share)
    {
        var k = scores.Length;
        var n = scores[0].Length;
        var offsets = new double[k];
        var predictions = new byte[n];
        var counts = new int[k];
        for (var round = 0; round <= 20; round++)
        {
            Array.Clear(counts);
            for (var i = 0; i < n; i++)
            {
                var best = 0;
                var bestScore = double.NegativeInfinity;
                for (var c = 0; c < k; c++)
                {
                    var s = scores[c][i] + offsets[c];
                    if (s > bestScore)
                    {
                        bestScore = s;
                        best = c;
                    }
                }

                predictions[i] = (byte)best;
                counts[best]++;
            }

            if (round == 20)
            {
                break;
            }

            for (var c = 0; c < k; c++)
            {
                offsets[c] += 0.5 * (share[c] - ((double)counts[c] / n));
            }
        }

        return predictions;
    }
}
