using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Statistics;
using TeachServe.Server.Events;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.OwnerConsole;

/// <summary>
/// How one item fared in the recent sessions: how often it was shown and missed, the miss rate's 95 % Wilson interval,
/// and for a teaching item the mean drop of the predicted error at that answer. A test item that most annotators
/// miss (the interval's lower end above one half, at least <see cref="ConsoleStats.MinShownForSuspect"/> answers) is
/// suspect: likely mislabelled or ambiguous.
/// </summary>
public sealed record ItemStat(string ItemId, bool Teaching, int Shown, int Missed, Interval MissInterval, double? MeanDrop)
{
    public double MissRate => Shown > 0 ? (double)Missed / Shown : double.NaN;
    public bool Suspect => !Teaching && Shown >= ConsoleStats.MinShownForSuspect && MissInterval.Low > 0.5;
}

/// <summary>One recent session as the console lists it.</summary>
public sealed record SessionRow(SessionView View, TimeSpan? Duration);

/// <summary>
/// One tested annotator, released or not: predicted error when teaching ended, observed test error with its 95 %
/// Wilson interval (Wilson 1927) over the test answers, and how the session ended.
/// </summary>
public sealed record CalibrationPoint(string WorkerRef, double Predicted, double Observed, int TestAnswered,
    double Low = double.NaN, double High = double.NaN, string Phase = Phases.Released);

/// <summary>Mean predicted error after the n-th teaching answer, over the sessions that got that far.</summary>
public sealed record CurvePoint(int TeachingStep, double MeanPredictedError, int Sessions);

public sealed record OnboardingStats(
    IReadOnlyDictionary<string, int> ByPhase,
    int Released,
    int Failed,
    double? ReleaseRate,
    Interval? ReleaseRateInterval,
    double? MedianItemsToRelease,
    TimeSpan? MedianTimeToRelease,
    IReadOnlyList<int> ItemsToRelease,
    IReadOnlyList<CalibrationPoint> Calibration,
    IReadOnlyList<CurvePoint> LearningCurve,
    IReadOnlyList<SessionRow> Recent,
    int SessionsInPictures,
    int Page = 1,
    int TotalSessions = 0,
    IReadOnlyList<ItemStat>? Items = null,
    double? CostPerRelease = null,
    IReadOnlyList<int>? VersionsInPictures = null);

/// <summary>
/// The live onboarding figures of one project. Counts cover every session; medians cover the most recent
/// <see cref="MaxEnded"/> ended sessions and the pictures the most recent <see cref="MaxForPictures"/> sessions, so the
/// page stays fast on a busy project.
/// </summary>
public static class ConsoleStats
{
    public const int MaxEnded = 5000;
    public const int MaxForPictures = 300;
    public const int RecentRows = 25;
    public const int MinShownForSuspect = 5;

    /// <param name="page">Which page of the session table, newest first, <see cref="RecentRows"/> rows each (from 1).</param>
    /// <param name="cost">The project's cost settings; with them, the cost per release of the recent ended sessions.</param>
    /// <param name="version">Only the sessions of this model version; null for all.</param>
    public static async Task<OnboardingStats> ComputeAsync(TeachServeDb db, string projectId, CancellationToken ct, int page = 1,
        Core.Projects.CostSettings? cost = null, int? version = null)
    {
        // Onboarding only: refreshers (released annotators' short sessions) are shown on the live-quality page.
        var sessions = db.Sessions.AsNoTracking().Where(s => s.ProjectId == projectId && s.Purpose == SessionPurposes.Onboarding);
        if (version is { } v) sessions = sessions.Where(s => s.ModelVersion == v);
        var byPhase = (await sessions.GroupBy(s => s.Phase).Select(g => new { g.Key, Count = g.Count() }).ToListAsync(ct))
            .ToDictionary(g => g.Key, g => g.Count, StringComparer.Ordinal);
        var released = byPhase.GetValueOrDefault(Phases.Released);
        var failed = byPhase.GetValueOrDefault(Phases.Failed);

        var releasedRows = await sessions.Where(s => s.Phase == Phases.Released)
            .OrderByDescending(s => s.EndedAt).Take(MaxEnded)
            .Select(s => new { s.Step, s.CreatedAt, s.EndedAt }).ToListAsync(ct);
        var items = releasedRows.Select(r => r.Step).Order().ToList();
        var minutes = releasedRows.Where(r => r.EndedAt is not null)
            .Select(r => (r.EndedAt!.Value - r.CreatedAt).TotalMinutes).Order().ToList();

        var recent = await sessions.OrderByDescending(s => s.CreatedAt).ThenByDescending(s => s.Id).Take(MaxForPictures).ToListAsync(ct);
        var (calibration, curve, itemStats) = await PicturesAsync(db, recent, ct);
        var total = byPhase.Values.Sum();
        page = Math.Clamp(page, 1, Math.Max(1, (total + RecentRows - 1) / RecentRows));
        var pageRows = page == 1 ? recent.Take(RecentRows).ToList()
            : await sessions.OrderByDescending(s => s.CreatedAt).ThenByDescending(s => s.Id).Skip((page - 1) * RecentRows).Take(RecentRows).ToListAsync(ct);
        var rows = pageRows
            .Select(s => new SessionRow(SessionViews.Of(s, forAnnotator: false), s.EndedAt is { } end ? end - s.CreatedAt : null))
            .ToList();

        double? costPerRelease = null;
        if (cost is not null)
        {
            // What the platform paid for the recent ended sessions (items answered and measured time, failed sessions
            // included: they are paid for too), per release among them.
            var endedRows = await sessions.Where(s => s.Phase == Phases.Released || s.Phase == Phases.Failed)
                .OrderByDescending(s => s.EndedAt).Take(MaxEnded)
                .Select(s => new { s.Phase, s.TaughtCount, s.TestAnswered, s.CreatedAt, s.EndedAt }).ToListAsync(ct);
            var releases = endedRows.Count(r => r.Phase == Phases.Released);
            if (releases > 0)
                costPerRelease = endedRows.Sum(r => (r.TaughtCount * cost.PerTeachingItem) + (r.TestAnswered * cost.PerTestItem)
                    + ((r.EndedAt is { } end ? (end - r.CreatedAt).TotalMinutes : 0) * cost.PerMinute)) / releases;
        }

        var ended = released + failed;
        Interval? interval = ended > 0 ? ProportionIntervals.Wilson(released, ended) : null;
        return new OnboardingStats(
            byPhase, released, failed,
            ended > 0 ? (double)released / ended : null,
            interval,
            items.Count > 0 ? Median(items.Select(i => (double)i).ToList()) : null,
            minutes.Count > 0 ? TimeSpan.FromMinutes(Median(minutes)) : null,
            items, calibration, curve, rows, recent.Count, page, total, itemStats, costPerRelease,
            recent.Select(s => s.ModelVersion).Distinct().Order().ToList());
    }

    /// <summary>Median of a sorted list; the mean of the middle two for an even count.</summary>
    public static double Median(IReadOnlyList<double> sorted) =>
        sorted.Count % 2 == 1 ? sorted[sorted.Count / 2] : (sorted[sorted.Count / 2 - 1] + sorted[sorted.Count / 2]) / 2;

    private static async Task<(List<CalibrationPoint>, List<CurvePoint>, List<ItemStat>)> PicturesAsync(
        TeachServeDb db, List<Session> recent, CancellationToken ct)
    {
        var ids = recent.Select(s => s.Id).ToList();
        var events = await db.Events.AsNoTracking()
            .Where(e => e.Type == EventTypes.Answer && e.SessionId != null && ids.Contains(e.SessionId))
            .OrderBy(e => e.SessionId).ThenBy(e => e.Step)
            .Select(e => new { e.SessionId, e.DataJson }).ToListAsync(ct);

        var sums = new List<(double Sum, int Count)>();
        var lastTaught = new Dictionary<string, double>(StringComparer.Ordinal);
        var tally = new Dictionary<(string ItemId, bool Teaching), (int Shown, int Missed, double DropSum, int Drops)>();
        foreach (var group in events.GroupBy(e => e.SessionId!))
        {
            var step = 0;
            double? previous = null;
            foreach (var e in group)
            {
                using var doc = JsonDocument.Parse(e.DataJson);
                var root = doc.RootElement;
                var teaching = root.GetProperty("phase").GetString() == Phases.Teaching;
                var key = (root.GetProperty("itemId").GetString()!, teaching);
                var t = tally.GetValueOrDefault(key);
                t = (t.Shown + 1, t.Missed + (root.GetProperty("correct").GetBoolean() ? 0 : 1), t.DropSum, t.Drops);
                double? value = teaching && root.GetProperty("response").TryGetProperty("predictedError", out var pe)
                    && pe.ValueKind == JsonValueKind.Number ? pe.GetDouble() : null;
                if (value is { } v && previous is { } before) t = (t.Shown, t.Missed, t.DropSum + (before - v), t.Drops + 1);
                tally[key] = t;
                if (value is not { } taught) continue;
                previous = taught;
                if (sums.Count <= step) sums.Add((0, 0));
                sums[step] = (sums[step].Sum + taught, sums[step].Count + 1);
                lastTaught[group.Key] = taught;
                step++;
            }
        }
        var curve = sums.Select((s, i) => new CurvePoint(i + 1, s.Sum / s.Count, s.Count)).ToList();

        var calibration = new List<CalibrationPoint>();
        // Every tested annotator, not only the released ones: released annotators alone would flatter the predictions
        // (a session whose test went badly is exactly where the prediction failed).
        foreach (var s in recent.Where(s => s.Phase is Phases.Released or Phases.Failed && s.EvidenceJson is not null))
        {
            var evidence = Json.Deserialize<EvidenceView>(s.EvidenceJson!);
            if (evidence.TestError is { } observed && evidence.TestAnswered > 0 && lastTaught.TryGetValue(s.Id, out var predicted))
            {
                var interval = Core.Statistics.ProportionIntervals.Wilson(evidence.TestErrors, evidence.TestAnswered);
                calibration.Add(new CalibrationPoint(s.WorkerRef, predicted, observed, evidence.TestAnswered, interval.Low, interval.High, s.Phase));
            }
        }
        var itemStats = tally
            .Select(kv => new ItemStat(kv.Key.ItemId, kv.Key.Teaching, kv.Value.Shown, kv.Value.Missed,
                ProportionIntervals.Wilson(kv.Value.Missed, kv.Value.Shown), kv.Value.Drops > 0 ? kv.Value.DropSum / kv.Value.Drops : null))
            .ToList();
        return (calibration, curve, itemStats);
    }
}
