using System.Diagnostics;
using TeachServe.Core.Hypotheses;
using TeachServe.Core.Projects;

namespace TeachServe.Core.Model;

/// <summary>Compiles a validated project into an immutable <see cref="ModelVersion"/>.</summary>
public static class ModelCompiler
{
    /// <summary>Hypotheses with errors in bins of this width make up the summary's histogram.</summary>
    public const double HistogramBinWidth = 0.05;

    /// <summary>Length of the precomputed stochastic-greedy order; sessions extend it online when they go further.</summary>
    public const int PrecomputedGreedyLength = 200;

    public static ModelVersion Compile(ProjectDefinition project, CancellationToken cancellationToken = default)
    {
        var stopwatch = Stopwatch.StartNew();
        var settings = project.Settings;
        var labels = settings.Labels;
        var labelIndex = labels.Select((name, i) => (name, i)).ToDictionary(t => t.name, t => t.i, StringComparer.Ordinal);
        var ordered = project.Items.Where(i => i.Pool == Pools.Teach).Concat(project.Items.Where(i => i.Pool == Pools.Test)).ToArray();
        var teachCount = project.Items.Count(i => i.Pool == Pools.Teach);
        var truth = ordered.Select(i => labelIndex[i.Label]).ToArray();

        var input = new FamilyInput(ordered, truth, labels.Count, settings.Family);
        var pool = new HypothesisPool(ordered.Length, labels.Count);
        switch (settings.Family.Kind)
        {
            case FamilyKinds.Linear:
                LinearFamily.Generate(input, pool);
                break;
            case FamilyKinds.Stumps:
                StumpFamily.Generate(input, pool);
                break;
            case FamilyKinds.Cues:
                CueFamily.Generate(input, pool);
                break;
            case FamilyKinds.Table:
                TableFamily.Generate(input, pool, labels);
                break;
            default:
                throw new ArgumentException($"Unknown hypothesis family '{settings.Family.Kind}'.", nameof(project));
        }

        cancellationToken.ThrowIfCancellationRequested();
        var targetPredictions = truth.Select(l => (byte)l).ToArray();
        var targetIndex = pool.IndexOf(targetPredictions);
        if (targetIndex < 0)
        {
            // The truth labelling joins with the weight of one ordinary hypothesis.
            targetIndex = pool.Add(targetPredictions, 1.0);
        }

        return Build(labels, ordered.Select(i => i.Id).ToArray(), teachCount, truth, pool, targetIndex, settings.Learner, settings.Family.Kind, stopwatch, cancellationToken);
    }

    /// <summary>Builds a model version directly from prediction vectors (tables, tests, benchmarks).</summary>
    public static ModelVersion FromPredictions(
        IReadOnlyList<string> labels,
        IReadOnlyList<string> itemIds,
        int teachCount,
        int[] truth,
        IEnumerable<(byte[] Predictions, double Weight)> hypotheses,
        LearnerSettings learner,
        CancellationToken cancellationToken = default)
    {
        var stopwatch = Stopwatch.StartNew();
        var pool = new HypothesisPool(itemIds.Count, labels.Count);
        foreach (var (predictions, weight) in hypotheses)
        {
            pool.Add(predictions, weight);
        }

        var target = truth.Select(l => (byte)l).ToArray();
        var targetIndex = pool.IndexOf(target);
        if (targetIndex < 0)
        {
            targetIndex = pool.Add(target, 1.0);
        }

        return Build(labels, itemIds, teachCount, truth, pool, targetIndex, learner, FamilyKinds.Table, stopwatch, cancellationToken);
    }

    private static ModelVersion Build(
        IReadOnlyList<string> labels,
        IReadOnlyList<string> itemIds,
        int teachCount,
        int[] truth,
        HypothesisPool pool,
        int targetIndex,
        LearnerSettings learner,
        string family,
        Stopwatch stopwatch,
        CancellationToken cancellationToken)
    {
        var m = pool.Count;
        var n = itemIds.Count;
        var words = MistakeKernel.WordsPerRow(m);
        var mistakes = new ulong[n * words];
        var predictions = labels.Count > 2 ? new byte[n * m] : null;
        for (var h = 0; h < m; h++)
        {
            var p = pool.Predictions[h];
            for (var i = 0; i < n; i++)
            {
                if (p[i] != truth[i])
                {
                    mistakes[(i * words) + (h >> 6)] |= 1UL << (h & 63);
                }

                if (predictions is not null)
                {
                    predictions[(i * m) + h] = p[i];
                }
            }
        }

        var total = pool.Weights.Sum();
        var prior = pool.Weights.Select(w => w / total).ToArray();
        cancellationToken.ThrowIfCancellationRequested();

        var draft = new ModelVersion(labels, itemIds, teachCount, truth, mistakes, predictions, prior, targetIndex, learner, [], [], [], PlaceholderSummary);
        var greedy = TeachingOrders.StochasticGreedy(draft, draft.Q, Math.Min(teachCount, PrecomputedGreedyLength), cancellationToken);
        var cover = TeachingOrders.Cover(draft, out var unteachable);
        var easy = TeachingOrders.EasyFirst(draft);

        var error = draft.Error;
        var bins = new int[(int)Math.Ceiling(1.0 / HistogramBinWidth) + 1];
        var expected = 0.0;
        for (var h = 0; h < m; h++)
        {
            bins[Math.Min(bins.Length - 1, (int)(error[h] / HistogramBinWidth))]++;
            expected += prior[h] * error[h];
        }

        var summary = new ModelSummary
        {
            Family = family,
            Labels = labels.Count,
            TeachItems = teachCount,
            TestItems = n - teachCount,
            HypothesesGenerated = pool.Generated,
            Hypotheses = m,
            TargetPrior = prior[targetIndex],
            PriorExpectedError = expected,
            ErrorHistogram = bins,
            ErrorHistogramBinWidth = HistogramBinWidth,
            TeachingDimensionEstimate = cover.Length,
            UnteachablePriorMass = unteachable,
            Alpha = learner.Alpha,
            Q = draft.Q,
            CompileMilliseconds = stopwatch.Elapsed.TotalMilliseconds,
        };
        return new ModelVersion(labels, itemIds, teachCount, truth, mistakes, predictions, prior, targetIndex, learner, greedy, easy, cover, summary);
    }

    private static readonly ModelSummary PlaceholderSummary = new()
    {
        Family = string.Empty, Labels = 0, TeachItems = 0, TestItems = 0, HypothesesGenerated = 0, Hypotheses = 0, TargetPrior = 0,
        PriorExpectedError = 0, ErrorHistogram = [], ErrorHistogramBinWidth = HistogramBinWidth, TeachingDimensionEstimate = 0,
        UnteachablePriorMass = 0, Alpha = 0, Q = 0, CompileMilliseconds = 0,
    };
}
