using System.Diagnostics;
using TeachServe.Core.Hypotheses;
using TeachServe.Core.Projects;

namespace TeachServe.Core.Model;

/// <summary>Compiles a validated project into an immutable <see cref="ModelVersion"/>.</summary>
public static class ModelCompiler
{
    /// <summary>Hypotheses with errors in bins of this width make up the summary's histogram.</summary>
    public const double HistogramBinWidth = 0.05;

    /// <summary>Target error assumed for <see cref="ModelSummary.PriorMassNearTarget"/> when no gate is known (the gate's default).</summary>
    public const double DefaultTargetError = 0.1;

    /// <summary>How far above the target error <see cref="ModelSummary.PriorMassNearTarget"/> counts.</summary>
    public const double NearTargetMargin = 0.1;

    /// <summary>Length of the precomputed stochastic-greedy order; sessions extend it online when they go further.</summary>
    public const int PrecomputedGreedyLength = 200;

    public static ModelVersion Compile(ProjectDefinition project, CancellationToken cancellationToken = default) =>
        Compile(project, progress: null, cancellationToken);

    /// <summary>Compiles, reporting each step and the overall fraction done to <paramref name="progress"/>.</summary>
    public static ModelVersion Compile(ProjectDefinition project, IProgress<CompileProgress>? progress, CancellationToken cancellationToken = default) =>
        Compile(project, new CompileProgressReporter(progress), LinearFamily.Generate, cancellationToken);

    /// <summary>Compiles with a given linear generator (the tests and the benchmark pass the reference one).</summary>
    internal static ModelVersion Compile(
        ProjectDefinition project, CompileProgressReporter reporter, Action<FamilyInput, HypothesisPool, CompileProgressReporter> linear, CancellationToken cancellationToken)
    {
        var stopwatch = Stopwatch.StartNew();
        var settings = project.Settings;
        var labels = settings.Labels;
        var labelIndex = labels.Select((name, i) => (name, i)).ToDictionary(t => t.name, t => t.i, StringComparer.Ordinal);
        var ordered = project.Items.Where(i => i.Pool == Pools.Teach).Concat(project.Items.Where(i => i.Pool == Pools.Test)).ToArray();
        var teachCount = project.Items.Count(i => i.Pool == Pools.Teach);
        var truth = ordered.Select(i => labelIndex[i.Label]).ToArray();

        var input = new FamilyInput(ordered, truth, labels.Count, settings.Family);
        VectorSummary? vectors = null;
        var pool = new HypothesisPool(ordered.Length, labels.Count);
        reporter.Begin(CompileSteps.Hypotheses);
        switch (settings.Family.Kind)
        {
            case FamilyKinds.Linear:
                linear(input, pool, reporter);
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
            case FamilyKinds.Text or FamilyKinds.Embedding:
                reporter.Begin("principal components", CompileSteps.Hypotheses);
                var (reduced, explained) = EmbeddingFeatures.Reduce(settings.Family, ordered);
                vectors = new VectorSummary
                {
                    Model = settings.Family.Kind == FamilyKinds.Text ? project.EmbeddingModel : null,
                    Length = ordered.Length == 0 ? 0 : ordered[0].Embedding!.Length,
                    Dimensions = reduced.Count == 0 ? 0 : reduced[0].Features!.Count,
                    ExplainedVariance = explained,
                };
                linear(new FamilyInput(reduced, truth, labels.Count, settings.Family), pool, reporter);
                break;
            default:
                throw new ArgumentException($"Unknown hypothesis family '{settings.Family.Kind}'.", nameof(project));
        }

        cancellationToken.ThrowIfCancellationRequested();
        var targetPredictions = truth.Select(l => (byte)l).ToArray();
        var targetIndex = pool.IndexOf(targetPredictions);
        if (targetIndex < 0)
        {
            targetIndex = pool.Add(targetPredictions, OrdinaryWeight(pool));
        }

        var model = Build(labels, ordered.Select(i => i.Id).ToArray(), teachCount, truth, pool, targetIndex, settings.Learner, settings.Family.Kind, stopwatch, reporter, cancellationToken, settings.Gate.TargetError);
        if (vectors is not null)
        {
            model.Summary = model.Summary with { Vectors = vectors };
        }

        if (settings.Learner.Lapse is >= 0 and < 1)
        {
            model.Summary = model.Summary with { Gate = GateSummary.Of(Teaching.GateDesign.CreateOrClosest(settings.Gate, labels.Count, settings.Learner.Lapse), ordered.Length - teachCount) };
        }

        return model;
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
            targetIndex = pool.Add(target, OrdinaryWeight(pool));
        }

        return Build(labels, itemIds, teachCount, truth, pool, targetIndex, learner, FamilyKinds.Table, stopwatch, new CompileProgressReporter(null), cancellationToken);
    }

    /// <summary>
    /// The weight the truth labelling joins with when no hypothesis equals it: that of one ordinary hypothesis, the
    /// mean weight per generated hypothesis (1 for the generated families; for a table whose priors sum to 1 over n
    /// rows, 1/n rather than a raw 1, which would make the target about half the prior).
    /// </summary>
    private static double OrdinaryWeight(HypothesisPool pool) =>
        pool.Generated == 0 ? 1.0 : pool.Weights.Sum() / pool.Generated;

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
        CompileProgressReporter reporter,
        CancellationToken cancellationToken,
        double targetError = DefaultTargetError)
    {
        reporter.Begin(CompileSteps.Mistakes);
        var m = pool.Count;
        var n = itemIds.Count;
        var words = MistakeKernel.WordsPerRow(m);
        var mistakes = new ulong[n * words];

        // One word (64 hypotheses) at a time over all items: each mistake word is written once, and the 64
        // prediction vectors it reads are walked in step.
        var block = new byte[64][];
        for (var w = 0; w < words; w++)
        {
            var first = w * 64;
            var count = Math.Min(64, m - first);
            for (var j = 0; j < count; j++)
            {
                block[j] = pool.Predictions[first + j];
            }

            for (var i = 0; i < n; i++)
            {
                var label = truth[i];
                var word = 0UL;
                for (var j = 0; j < count; j++)
                {
                    word |= (block[j][i] != label ? 1UL : 0UL) << j;
                }

                mistakes[(i * words) + w] = word;
            }
        }

        var predictions = labels.Count > 2 ? new byte[n * m] : null;
        if (predictions is not null)
        {
            for (var h = 0; h < m; h++)
            {
                var p = pool.Predictions[h];
                for (var i = 0; i < n; i++)
                {
                    predictions[(i * m) + h] = p[i];
                }
            }
        }

        var total = pool.Weights.Sum();
        var prior = pool.Weights.Select(w => w / total).ToArray();
        cancellationToken.ThrowIfCancellationRequested();

        var draft = new ModelVersion(labels, itemIds, teachCount, truth, mistakes, predictions, prior, targetIndex, learner, [], [], [], PlaceholderSummary);
        reporter.Begin(CompileSteps.Greedy);
        var greedy = TeachingOrders.StochasticGreedy(draft, draft.Q, Math.Min(teachCount, PrecomputedGreedyLength), cancellationToken);
        reporter.Begin(CompileSteps.Cover);
        var cover = TeachingOrders.Cover(draft, out var unteachable);
        reporter.Begin(CompileSteps.EasyFirst);
        var easy = TeachingOrders.EasyFirst(draft);
        reporter.End();

        var error = draft.Error;
        var bins = new int[(int)Math.Ceiling(1.0 / HistogramBinWidth) + 1];
        var expected = 0.0;
        var nearLimit = targetError + NearTargetMargin;
        var near = 0.0;
        for (var h = 0; h < m; h++)
        {
            bins[Math.Min(bins.Length - 1, (int)(error[h] / HistogramBinWidth))]++;
            expected += prior[h] * error[h];
            if (h != targetIndex && error[h] <= nearLimit)
            {
                near += prior[h];
            }
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
            NearTargetErrorLimit = nearLimit,
            PriorMassNearTarget = near,
            Alpha = learner.Alpha,
            Q = draft.Q,
            CompileMilliseconds = stopwatch.Elapsed.TotalMilliseconds,
            MemoryBytes = MemoryBytes(mistakes.Length, predictions?.Length ?? 0, n, m, greedy.Length + easy.Length + cover.Length),
        };
        reporter.Begin(CompileSteps.Done, within: 1);
        reporter.End();
        return new ModelVersion(labels, itemIds, teachCount, truth, mistakes, predictions, prior, targetIndex, learner, greedy, easy, cover, summary, draft.ErrorArray);
    }

    /// <summary>
    /// Bytes the version's arrays hold in memory: mistake bits, predictions (more than two labels), per-hypothesis
    /// prior, error and learner weights, per-item labels and the precomputed orders. Object headers and the item
    /// texts are left out; they are small beside these for any project large enough to matter.
    /// </summary>
    private static long MemoryBytes(long mistakeWords, long predictionBytes, long items, long hypotheses, long orderEntries) =>
        (mistakeWords * sizeof(ulong)) + predictionBytes + (hypotheses * 3 * sizeof(double)) + (items * sizeof(int)) + (orderEntries * sizeof(int));

    private static readonly ModelSummary PlaceholderSummary = new()
    {
        Family = string.Empty, Labels = 0, TeachItems = 0, TestItems = 0, HypothesesGenerated = 0, Hypotheses = 0, TargetPrior = 0,
        PriorExpectedError = 0, ErrorHistogram = [], ErrorHistogramBinWidth = HistogramBinWidth, TeachingDimensionEstimate = 0,
        UnteachablePriorMass = 0, Alpha = 0, Q = 0, CompileMilliseconds = 0,
    };
}
