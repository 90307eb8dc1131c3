using System.Text.Json.Nodes;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.LiveQuality;
using TeachServe.Core.Statistics;
using TeachServe.Server.Events;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.LiveQuality;
using TeachServe.Server.Persistence;
using TeachServe.Server.Versions;

namespace TeachServe.Server.OwnerConsole;

/// <summary>
/// What the console's live-quality pages read: a page of the monitored annotators with counts per status, and one
/// annotator's checks replayed through their monitor (to place the alarms), status changes and outcomes. Read only;
/// refreshers that ended are taken in first, as the API's views do.
/// </summary>
public static class LiveConsoleReads
{
    public const int Rows = 25;
    public const int OutcomeRows = 50;

    /// <summary>The window of the moving live error: the last 20 checks, the fixed-window rule of common practice.</summary>
    public const int Window = 20;

    /// <summary>The statuses, the most urgent first: the table's order and the filter's.</summary>
    public static readonly IReadOnlyList<string> Statuses =
        [LiveStatusNames.Paused, LiveStatusNames.RefresherDue, LiveStatusNames.Watch, LiveStatusNames.Reliable];

    /// <param name="status">One of <see cref="Statuses"/>, or null (or anything else) for all.</param>
    /// <param name="page">From 1; out of range is clamped, as the session table's is.</param>
    public static async Task<LiveQualityTable> TableAsync(TeachServeDb db, Refreshers refreshers, string projectId, string? status, int page, CancellationToken ct)
    {
        await refreshers.ApplyEndedAsync(projectId, ct);
        var monitors = db.LiveMonitors.AsNoTracking().Where(m => m.ProjectId == projectId);
        var counts = await monitors.GroupBy(m => m.Status).Select(g => new { g.Key, Count = g.Count() }).ToListAsync(ct);
        var byStatus = Statuses.ToDictionary(s => s, s => counts.FirstOrDefault(c => c.Key == s)?.Count ?? 0, StringComparer.Ordinal);
        if (status is not null && !byStatus.ContainsKey(status)) status = null;
        var matching = status is null ? byStatus.Values.Sum() : byStatus[status];
        page = Math.Clamp(page, 1, Math.Max(1, (matching + Rows - 1) / Rows));

        var rows = await (status is null ? monitors : monitors.Where(m => m.Status == status))
            .OrderBy(m => m.Status == LiveStatusNames.Paused ? 0 : m.Status == LiveStatusNames.RefresherDue ? 1 : m.Status == LiveStatusNames.Watch ? 2 : 3)
            .ThenBy(m => m.WorkerRef)
            .Skip((page - 1) * Rows).Take(Rows).ToListAsync(ct);
        return new LiveQualityTable(byStatus, status, page, matching, rows.Select(LiveQualityOperations.View).ToList());
    }

    /// <summary>The project's newest <see cref="Rows"/> refresher sessions, newest first.</summary>
    public static async Task<List<LiveRefresherRow>> RefreshersAsync(TeachServeDb db, string projectId, CancellationToken ct) =>
        await db.RefresherStarts.AsNoTracking().Where(r => r.ProjectId == projectId)
            .Join(db.Sessions, r => r.SessionId, s => s.Id, (r, s) => new { Start = r, Session = s })
            .OrderByDescending(x => x.Session.CreatedAt).ThenByDescending(x => x.Session.Id).Take(Rows)
            .Select(x => new LiveRefresherRow(
                x.Session.Id, x.Session.WorkerRef, x.Session.CreatedAt, x.Session.EndedAt, x.Session.IsActive, x.Session.Phase,
                x.Session.TaughtCount, x.Start.MaxItems, x.Session.TestAnswered, x.Start.LiveChecks, x.Start.AppliedAt))
            .ToListAsync(ct);

    /// <summary>One annotator's live view; 404 when they have no live checks.</summary>
    public static async Task<Outcome<LiveAnnotatorDetail>> DetailAsync(
        TeachServeDb db, LiveQualityOperations live, ModelVersionCache versions, LiveMonitors monitors,
        string projectId, string workerRef, int outcomePage, CancellationToken ct)
    {
        var history = await live.HistoryAsync(projectId, workerRef, ct);
        if (!history.Succeeded) return history.Problem;
        var record = await db.LiveMonitors.AsNoTracking().FirstAsync(m => m.ProjectId == projectId && m.WorkerRef == workerRef, ct);

        var replay = await live.ReplayAsync(record, ct);
        var points = Points(replay.Points);
        var checks = replay.Points.Select(p => new LiveOutcomeView(p.Check.OutcomeId, p.Check.ItemId, p.Check.Label, p.Check.KnownLabel,
            p.Check.Wrong, p.Check.AnsweredAt, p.Check.ReceivedAt) { ModelPredictedError = p.ModelError }).ToList();

        var pages = Math.Max(1, (checks.Count + OutcomeRows - 1) / OutcomeRows);
        outcomePage = Math.Clamp(outcomePage, 1, pages);
        var outcomes = Enumerable.Reverse(checks).Skip((outcomePage - 1) * OutcomeRows).Take(OutcomeRows).ToList();

        var events = await db.Events.AsNoTracking()
            .Where(e => e.ProjectId == projectId && e.WorkerRef == workerRef && e.Type == EventTypes.LiveStatusChanged && e.At >= record.StartedAt)
            .OrderBy(e => e.Id).Select(e => new { e.At, e.DataJson }).ToListAsync(ct);
        var changes = events.Select(e => Change(e.At, e.DataJson)).ToList();

        var design = replay.Live.Monitor.Settings.Cusum;
        return new LiveAnnotatorDetail(history.Value.Annotator, design.TargetError, design.DriftError, points, changes, outcomes, outcomePage)
        {
            LikelyConfusions = history.Value.LikelyConfusions, WatchedRules = history.Value.WatchedRules,
            ForgettingPerCheck = record.ForgettingPerCheck,
        };
    }

    /// <summary>
    /// The points of the monitor's own replay (<see cref="LiveQualityOperations.ReplayAsync"/>), so the alarms fall on the
    /// checks that raised them, with the moving window of the count view and the model view's predicted error.
    /// </summary>
    public static List<LivePoint> Points(IReadOnlyList<LiveQualityOperations.ReplayPoint> replay)
    {
        var points = new List<LivePoint>(replay.Count);
        var errors = 0;
        var inWindow = 0;
        for (var i = 0; i < replay.Count; i++)
        {
            var (check, step) = (replay[i].Check, replay[i].Step);
            if (check.Wrong) errors++;
            if (check.Wrong) inWindow++;
            if (i >= Window && replay[i - Window].Check.Wrong) inWindow--;
            var n = Math.Min(i + 1, Window);
            var interval = ProportionIntervals.Wilson(inWindow, n);
            points.Add(new LivePoint(i + 1, check.OutcomeId, check.AnsweredAt, check.Wrong, errors / (double)(i + 1),
                inWindow / (double)n, interval.Low, interval.High, step.Alarms != LiveAlarms.None, replay[i].ModelError));
        }
        return points;
    }

    private static LiveStatusChange Change(DateTimeOffset at, string dataJson)
    {
        var data = JsonNode.Parse(dataJson) as JsonObject ?? [];
        string? Text(string name) => data[name] is JsonValue v && v.TryGetValue<string>(out var s) ? s : null;
        int? Number(string name) => data[name] is JsonValue v && v.TryGetValue<int>(out var n) ? n : null;
        DateTimeOffset? Time(string name) => data[name] is JsonValue v && v.TryGetValue<DateTimeOffset>(out var t) ? t : null;
        var alarm = data["alarm"] is JsonValue a && a.TryGetValue<bool>(out var b) && b;
        var causes = data["causes"] is JsonArray list ? list.Select(c => c?.GetValue<string>() ?? "").ToList() : [];
        return new LiveStatusChange(at, Text("from") ?? "", Text("to") ?? "", Text("outcomeId"), Time("answeredAt"), Number("checks"), Number("errors"),
            alarm, Text("refresherSessionId")) { Causes = causes, CandidateRule = Text("candidateRule") };
    }
}
