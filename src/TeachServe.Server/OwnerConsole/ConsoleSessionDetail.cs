using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Events;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;
using TeachServe.Server.Versions;

namespace TeachServe.Server.OwnerConsole;

/// <summary>
/// One answer as the owner reads it. <see cref="TrueLabel"/> is set for teaching answers only: the annotator was shown
/// it. A test answer carries whether it was right (the owner sees test results, in the evidence and the item
/// statistics) but never the test item's label, which stays on the server as everywhere else.
/// </summary>
/// <param name="Took">Time since the previous answer (or since the session started, for the first): the server records
/// when an answer arrives, not when an item is put on screen.</param>
/// <param name="PredictedError">After a teaching answer, the belief's predicted error (recorded with the answer).</param>
/// <param name="Attempt">For a test answer, its attempt (from 1).</param>
/// <param name="Counted">For a test answer, whether the test counted it (answers after the decision are recorded only).</param>
public sealed record AnswerLine(
    int Step, string Phase, string ItemId, string? ItemText, string Label, string? TrueLabel, bool Correct,
    DateTimeOffset At, TimeSpan? Took, double? PredictedError, int? Attempt, bool? Counted)
{
    public bool Teaching => Phase == Phases.Teaching;
}

/// <summary>
/// One check (test attempt): its answers, errors, whether it passed and what the gate did next. Counts of answers the
/// test counted come from the session's evidence, which is written when the session ends; null before.
/// </summary>
public sealed record AttemptLine(
    int Attempt, IReadOnlyList<AnswerLine> Answers, int? CountedAnswered, int? CountedErrors, bool? Passed, string Decision)
{
    public int Errors => Answers.Count(a => !a.Correct);
}

/// <summary>Everything the per-annotator page shows of one session, read from its row and its events.</summary>
public sealed record SessionDetail(
    SessionView View,
    string Purpose,
    string? ExperimentId,
    int? Arm,
    string? ArmName,
    double? StartingPredictedError,
    double TargetError,
    IReadOnlyList<AnswerLine> Answers,
    IReadOnlyList<AttemptLine> Attempts)
{
    public IReadOnlyList<AnswerLine> Taught => Answers.Where(a => a.Teaching).ToList();
}

/// <summary>
/// Reads one session for its project's owner from the session row and the event log, as the rest of the console does:
/// every fact on the page (labels, correctness, predicted error, times) was recorded when it happened, so nothing is
/// replayed through the engine here.
/// </summary>
public static class ConsoleSessionDetail
{
    /// <summary>Longest item text shown in the answer table; the rest is cut with an ellipsis.</summary>
    public const int TextLength = 80;

    public static async Task<Outcome<SessionDetail>> ReadAsync(
        TeachServeDb db, ModelVersionCache versions, string projectId, string sessionId, CancellationToken ct)
    {
        // Another project's session is answered exactly like a missing one: its existence is not the owner's business.
        var session = await db.Sessions.AsNoTracking().FirstOrDefaultAsync(s => s.Id == sessionId && s.ProjectId == projectId, ct);
        if (session is null) return Problems.NotFound("No session with this id in your project.");

        var events = await db.Events.AsNoTracking()
            .Where(e => e.SessionId == sessionId && (e.Type == EventTypes.Answer || e.Type == EventTypes.SessionStarted))
            .OrderBy(e => e.Id)
            .Select(e => new { e.Type, e.Step, e.At, e.DataJson }).ToListAsync(ct);
        var version = await versions.GetAsync(projectId, session.ModelVersion, ct);

        double? starting = null;
        string? armName = null;
        var previous = session.CreatedAt;
        var answers = new List<AnswerLine>();
        var attempt = 0;
        var inTest = false;
        foreach (var e in events.Where(e => e.Type == EventTypes.SessionStarted))
        {
            using var doc = JsonDocument.Parse(e.DataJson);
            starting = Number(doc.RootElement, "predictedError");
            armName = doc.RootElement.TryGetProperty("armName", out var n) && n.ValueKind == JsonValueKind.String ? n.GetString() : null;
            previous = e.At;
        }
        foreach (var e in events.Where(e => e.Type == EventTypes.Answer).OrderBy(e => e.Step))
        {
            var data = Json.Deserialize<AnswerEventData>(e.DataJson);
            var teaching = data.Phase == Phases.Teaching;
            if (!teaching && !inTest) attempt++;
            inTest = !teaching;
            var text = data.Item >= 0 && data.Item < version.Content.Count ? version.Content[data.Item] : null;
            answers.Add(new AnswerLine(
                e.Step ?? answers.Count, data.Phase, data.ItemId, Describe(text), data.Label,
                teaching ? data.Response.Label : null, data.Correct, e.At, e.At - previous,
                teaching ? data.Response.PredictedError : null, teaching ? null : attempt, null));
            previous = e.At;
        }

        var view = SessionViews.Of(session, forAnnotator: false);
        var evidence = view.Evidence?.Attempts;
        var attempts = new List<AttemptLine>();
        foreach (var group in answers.Where(a => a.Attempt is not null).GroupBy(a => a.Attempt!.Value))
        {
            var counted = evidence?.FirstOrDefault(a => a.Attempt == group.Key);
            var list = group.ToList();
            if (counted is not null)
                list = list.Select((a, i) => a with { Counted = i < counted.CountedAnswered }).ToList();
            // A later teaching answer means the gate sent the annotator back to teaching (a retake).
            var retaken = answers.Any(a => a.Teaching && a.Step > list[^1].Step);
            var passed = counted?.Passed ?? (retaken ? false : null);
            var decision = (passed, retaken, session.Phase) switch
            {
                (true, _, _) => "passed: released",
                (false, true, _) => "not passed: retake, back to teaching",
                (false, false, Phases.Failed) => "not passed: failed",
                (false, false, _) => "not passed",
                _ => "not decided yet: the check goes on",
            };
            attempts.Add(new AttemptLine(group.Key, list, counted?.CountedAnswered, counted?.CountedErrors, passed, decision));
        }
        var answersWithCounts = answers.Select(a => a.Attempt is { } k
            ? attempts[k - 1].Answers.First(x => x.Step == a.Step)
            : a).ToList();

        return new SessionDetail(view, session.Purpose, session.ExperimentId, session.ArmIndex, armName, starting,
            version.Settings.Gate.TargetError, answersWithCounts, attempts);
    }

    /// <summary>The item's text, shortened; none for a picture (its id names it).</summary>
    public static string? Describe(Core.Projects.ItemContent? content) => content switch
    {
        { Text: { Length: > 0 } text } => text.Length <= TextLength ? text : string.Concat(text.AsSpan(0, TextLength - 1), "…"),
        _ => null,
    };

    private static double? Number(JsonElement root, string name) =>
        root.TryGetProperty(name, out var v) && v.ValueKind == JsonValueKind.Number ? v.GetDouble() : null;
}
