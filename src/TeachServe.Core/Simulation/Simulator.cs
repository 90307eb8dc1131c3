using TeachServe.Core.Model;
using TeachServe.Core.Teaching;

namespace TeachServe.Core.Simulation;

public sealed record SimulationOptions
{
    public required SessionOptions Session { get; init; }
    public int Learners { get; init; } = 200;
    public ulong Seed { get; init; } = 1;
    public LearnerVariant Variant { get; init; } = LearnerVariant.Assumed;
    /// <summary>The items' features, aligned with the model version; needed by learner kinds unlike the model (<see cref="LearnerKinds.NeedsFeatures"/>).</summary>
    public ItemFeatures? Features { get; init; }
    /// <summary>The project's costs, for <see cref="SimulationResult.CostPerQualifiedRelease"/>.</summary>
    public Projects.CostSettings Cost { get; init; } = new();
}

/// <summary>Mean of the learners' true error after a number of teaching items, with a 95 % normal interval.</summary>
public readonly record struct CurvePoint(int Step, double MeanTrueError, double Low, double High);

public sealed record SimulationResult
{
    public required string Policy { get; init; }
    public required LearnerVariant Variant { get; init; }
    public required int Learners { get; init; }
    public required int Released { get; init; }
    public double ReleaseRate => Learners == 0 ? double.NaN : (double)Released / Learners;
    /// <summary>Share of released learners whose true error is at most the target.</summary>
    public required double ReleasePrecision { get; init; }
    /// <summary>Learners whose true error at the end exceeded target + delta.</summary>
    public required int Unqualified { get; init; }
    /// <summary>Of those, how many were released.</summary>
    public required int UnqualifiedReleased { get; init; }
    public required double MeanTeachingItems { get; init; }
    public required double MeanTestItems { get; init; }
    /// <summary>Mean teaching items among released learners.</summary>
    public required double MeanTeachingItemsToRelease { get; init; }
    public required double MeanFinalTrueError { get; init; }
    public required IReadOnlyList<CurvePoint> Curve { get; init; }
    /// <summary>Released learners whose true error at the end is within target (DESIGN 1, "qualified release").</summary>
    public int QualifiedReleases { get; init; }
    /// <summary>Learners within target at the end who were not released.</summary>
    public int FailedQualified { get; init; }
    /// <summary>All items answered by all learners (teaching and test), over the qualified releases; NaN without one.</summary>
    public double ItemsPerQualifiedRelease { get; init; }
    /// <summary>
    /// Total cost over qualified releases: items and minutes paid, plus the cost of each release above target and
    /// of each learner within target who was not released (<see cref="Projects.CostSettings"/>); NaN without one.
    /// </summary>
    public double CostPerQualifiedRelease { get; init; }
}

/// <summary>Runs simulated annotators through a policy and the gate (DESIGN 1, "simulation").</summary>
public static class Simulator
{
    public static SimulationResult Run(ModelVersion model, SimulationOptions options, IProgress<double>? progress = null, CancellationToken cancellationToken = default)
    {
        if (LearnerKinds.NeedsFeatures(options.Variant) && options.Features is null)
        {
            throw new ArgumentException($"The learner kind {options.Variant} answers from item features; pass SimulationOptions.Features.", nameof(options));
        }

        var gate = options.Session.Gate;
        var trajectories = new List<double>[options.Learners];
        int released = 0, unqualified = 0, unqualifiedReleased = 0, preciseReleases = 0, failedQualified = 0;
        double teaching = 0, testing = 0, teachingReleased = 0, finalError = 0;
        var alpha = options.Session.Alpha ?? model.Learner.Alpha;
        var lapse = options.Session.Lapse ?? model.Learner.Lapse;
        for (var i = 0; i < options.Learners; i++)
        {
            cancellationToken.ThrowIfCancellationRequested();

            // The same learner i (same random stream) meets every policy, so comparisons share one population.
            var learner = LearnerKinds.Create(model, options.Variant, options.Features, alpha, lapse, gate.TargetError, new SeededRandom(SeededRandom.Derive(options.Seed, (ulong)i)));
            var session = SessionRun.Start(model, options.Session with { Seed = SeededRandom.Derive(options.Seed ^ 0x5EED, (ulong)i) });
            var curve = new List<double> { learner.TrueError };
            while (!session.IsEnded)
            {
                var item = session.CurrentItem;
                var teachingStep = session.Phase == SessionPhase.Teaching;
                session.Answer(learner.Answer(item));
                if (teachingStep)
                {
                    learner.SeeFeedback(item);
                    curve.Add(learner.TrueError);
                }
            }

            trajectories[i] = curve;
            teaching += session.TaughtCount;
            testing += session.TestAnswered;
            finalError += learner.TrueError;
            var isReleased = session.Phase == SessionPhase.Released;
            var isUnqualified = learner.TrueError > gate.TargetError + gate.Test.Delta;
            if (isReleased)
            {
                released++;
                teachingReleased += session.TaughtCount;
                if (learner.TrueError <= gate.TargetError)
                {
                    preciseReleases++;
                }
            }
            else if (learner.TrueError <= gate.TargetError)
            {
                failedQualified++;
            }

            if (isUnqualified)
            {
                unqualified++;
                if (isReleased)
                {
                    unqualifiedReleased++;
                }
            }

            progress?.Report((i + 1.0) / options.Learners);
        }

        var n = Math.Max(1, options.Learners);
        var cost = options.Cost;
        var paid = (teaching * cost.PerTeachingItem) + (testing * cost.PerTestItem) + ((teaching + testing) * cost.SecondsPerItem / 60.0 * cost.PerMinute);
        var mistakes = ((released - preciseReleases) * cost.FalseRelease) + (failedQualified * cost.FailedQualified);
        return new SimulationResult
        {
            QualifiedReleases = preciseReleases,
            FailedQualified = failedQualified,
            ItemsPerQualifiedRelease = preciseReleases == 0 ? double.NaN : (teaching + testing) / preciseReleases,
            CostPerQualifiedRelease = preciseReleases == 0 ? double.NaN : (paid + mistakes) / preciseReleases,
            Policy = options.Session.Policy,
            Variant = options.Variant,
            Learners = options.Learners,
            Released = released,
            ReleasePrecision = released == 0 ? double.NaN : (double)preciseReleases / released,
            Unqualified = unqualified,
            UnqualifiedReleased = unqualifiedReleased,
            MeanTeachingItems = teaching / n,
            MeanTestItems = testing / n,
            MeanTeachingItemsToRelease = released == 0 ? double.NaN : teachingReleased / released,
            MeanFinalTrueError = finalError / n,
            Curve = BuildCurve(trajectories),
        };
    }

    /// <summary>Mean true error after each teaching step; a learner whose teaching ended keeps its last value.</summary>
    private static CurvePoint[] BuildCurve(List<double>[] trajectories)
    {
        if (trajectories.Length == 0)
        {
            return [];
        }

        var longest = trajectories.Max(t => t.Count);
        var points = new CurvePoint[longest];
        for (var step = 0; step < longest; step++)
        {
            double sum = 0, sumSq = 0;
            foreach (var t in trajectories)
            {
                var v = t[Math.Min(step, t.Count - 1)];
                sum += v;
                sumSq += v * v;
            }

            var count = trajectories.Length;
            var mean = sum / count;
            var variance = count > 1 ? Math.Max(0, (sumSq - (count * mean * mean)) / (count - 1)) : 0;
            var half = 1.959964 * Math.Sqrt(variance / count);
            points[step] = new CurvePoint(step, mean, mean - half, mean + half);
        }

        return points;
    }
}
