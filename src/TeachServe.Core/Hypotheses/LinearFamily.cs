using TeachServe.Core.Model;

namespace TeachServe.Core.Hypotheses;

/// <summary>
/// Linear rules over standardised numeric features (DESIGN 2.6): the fitted logistic direction, perturbed copies
/// of it at several scales, one- and two-feature cues with both signs, and random directions with
/// class-balanced offsets. Projects with more than two labels or more than <see cref="LowDimensionLimit"/>
/// features get <see cref="WideLinearFamily"/> instead, whose rules stay near the fitted target.
/// </summary>
public static class LinearFamily
{
    private static readonly double[] PerturbationScales = [0.05, 0.15, 0.3, 0.6, 1.0];

    /// <summary>
    /// Two-label projects with at most this many features keep the original generator (every one- and two-feature
    /// cue, perturbations in all features): in few dimensions they stay near the target, and the seed projects'
    /// hypothesis sets stay as they were.
    /// </summary>
    public const int LowDimensionLimit = 8;

    public static void Generate(FamilyInput input, HypothesisPool pool) => Generate(input, pool, new CompileProgressReporter(null));

    public static void Generate(FamilyInput input, HypothesisPool pool, CompileProgressReporter progress)
    {
        progress.Begin("features", CompileSteps.Hypotheses);
        var (names, rows) = input.StandardisedFeatures();
        var columns = new FeatureColumns(rows);
        if (input.LabelCount > 2 || names.Length > LowDimensionLimit)
        {
            WideLinearFamily.Generate(input, pool, progress, rows, columns, PerturbationScales);
            return;
        }

        var d = names.Length;
        var k = input.LabelCount;
        var settings = input.Settings;
        var random = new SeededRandom((ulong)settings.Seed);
        var bias = settings.SimplicityBias;
        double Weight(int complexity) => Math.Pow(bias, -(complexity - 1));

        progress.Begin("target fit", CompileSteps.Hypotheses, 0.02);
        var fitted = LogisticFit.Fit(rows, input.Labels, k);
        pool.Add(columns.Predict(fitted), Weight(d));

        progress.Begin("perturbed copies", CompileSteps.Hypotheses, 0.1);
        var norm = Math.Sqrt(fitted.Sum(r => r.Sum(v => v * v)) / k);
        foreach (var scale in PerturbationScales)
        {
            for (var copy = 0; copy < settings.PerturbedCopies; copy++)
            {
                var w = fitted.Select(r => r.Select(v => v + (scale * norm * random.NextGaussian())).ToArray()).ToArray();
                pool.Add(columns.Predict(w), Weight(d));
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

        progress.Begin("cues", CompileSteps.Hypotheses, 0.15);
        for (var index = 0; index < subsets.Count; index++)
        {
            var subset = subsets[index];
            progress.Report(CompileSteps.Hypotheses, 0.15 + (0.7 * index / subsets.Count));
            if (k == 2)
            {
                AddSignedCues(rows, input.Labels, subset, pool, Weight(subset.Length));
            }
            else
            {
                var w = LogisticFit.Fit(rows, input.Labels, k, subset);
                pool.Add(columns.Predict(w), Weight(subset.Length));
                foreach (var scale in PerturbationScales)
                {
                    var perturbed = w.Select(r => r.Select((v, idx) => idx == r.Length - 1 || subset.Contains(idx) ? v + (scale * random.NextGaussian()) : v).ToArray()).ToArray();
                    pool.Add(columns.Predict(perturbed), Weight(subset.Length));
                }
            }
        }

        progress.Begin("random directions", CompileSteps.Hypotheses, 0.85);
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
                w = BalanceOffsets(columns, w, classShare);
            }

            pool.Add(columns.Predict(w), Weight(d));
        }
    }

    internal static void AddSignedCues(double[][] rows, int[] labels, int[] subset, HypothesisPool pool, double weight)
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
    private static double[][] BalanceOffsets(FeatureColumns columns, double[][] w, double[] share)
    {
        for (var round = 0; round < 20; round++)
        {
            var predictions = columns.Predict(w);
            for (var c = 0; c < w.Length; c++)
            {
                var predictedShare = (double)predictions.Count(p => p == c) / predictions.Length;
                w[c][^1] += 0.5 * (share[c] - predictedShare);
            }
        }

        return w;
    }
}
