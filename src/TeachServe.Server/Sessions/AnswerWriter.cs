using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Teaching;
using TeachServe.Server.Events;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Releases;
using TeachServe.Server.Versions;
using TeachServe.Server.Webhooks;

namespace TeachServe.Server.Sessions;

/// <summary>
/// The one write path of an answer. Under the session's lock: check the step, advance the engine, then hand the
/// rows to the single writer (<see cref="AnswerCommitLoop"/>), which in one transaction updates the session row
/// (only if its step is still the one we read: optimistic concurrency), appends the answer event holding the
/// exact response, and on the gate's decision the end event, the release and the webhook outbox row. The
/// response is sent only after the commit, so an acknowledged answer is never lost, and a retry of the same
/// step is answered from the stored event.
/// </summary>
public sealed partial class AnswerWriter(
    TeachServeDb db, SessionEngine engine, SessionStateCache states, AnswerCommitLoop commits, OutboxSignal outbox,
    AuthenticatedSession authenticated, SqliteRowReader<Project> projectRows, TimeProvider time, ILogger<AnswerWriter> logger)
{
    public async Task<AnswerResult> WriteAsync(string sessionId, AnswerRequest request, CancellationToken ct)
    {
        if (request.Step < 0) throw ApiProblemException.BadRequest("'step' must be 0 or more.");
        using var held = await states.LockAsync(sessionId, ct);
        var session = await authenticated.RowAsync(db, states, sessionId, ct)
            ?? throw ApiProblemException.NotFound("No such session.");

        if (request.Step < session.Step) return await ReplayedAsync(session, request, ct);
        if (request.Step > session.Step || !session.IsActive)
            throw StepConflict(session, session.IsActive
                ? $"Step {request.Step} is not the current step; answer step {session.Step}."
                : $"The session has ended ({session.Phase}).");

        var (version, run) = await engine.LoadAsync(db, session, ct);
        var item = run.CurrentItem;
        if (!ItemRefs.Matches(session.RefKey, session.Step, item, request.ItemRef))
            throw StepConflict(session, "The itemRef is not the item of this step; ask for the next item again.");
        if (!version.LabelIndex.TryGetValue(request.Label, out var labelIndex))
            throw ApiProblemException.Unprocessable($"'{Clip(request.Label)}' is not one of the labels: {string.Join(", ", version.Model.Labels)}.");

        // From here the cached run is ahead of the database until the commit; drop it on any failure.
        states.Evict(sessionId);
        var phaseBefore = run.Phase;
        var outcome = run.Answer(labelIndex);
        var result = Result(version, run, outcome, item);
        var now = time.GetUtcNow();
        var ended = run.IsEnded;
        var evidence = ended ? SessionEngine.Evidence(version, run) : null;
        var evidenceJson = evidence is null ? null : SessionEngine.EvidenceJson(evidence);
        var phase = SessionEngine.PhaseName(run.Phase);

        var rows = new List<object>
        {
            new SessionEvent
            {
                ProjectId = session.ProjectId, SessionId = sessionId, WorkerRef = session.WorkerRef,
                Type = EventTypes.Answer, Step = session.Step, At = now,
                DataJson = Json.Serialize(new AnswerEventData(
                    item, version.Model.ItemIds[item], request.ItemRef, request.Label, labelIndex,
                    outcome.Correct, SessionEngine.PhaseName(phaseBefore), result)),
            },
        };
        var webhook = ended && await EndRowsAsync(rows, session, version, phase, evidence!, evidenceJson!, run.Step, now, ct);

        // The lock stays held until the commit, so this node never has two writes of one session in flight.
        var written = await commits.CommitAsync(new PendingAnswer
        {
            SessionId = sessionId, FromStep = session.Step, ToStep = run.Step, Phase = phase, IsActive = !ended,
            PredictedError = outcome.WasTeaching || ended ? run.PredictedError : session.PredictedError,
            TaughtCount = run.TaughtCount, TestAnswered = run.TestAnswered, Now = now,
            EndedAt = ended ? now : null, EvidenceJson = evidenceJson, Rows = rows,
            Exposures = phaseBefore == SessionPhase.Testing ? Exposures(session.ProjectId, version, run, item) : [],
        }, ct);
        // Another node answered this step first; its stored response decides.
        if (!written) return await ReplayedAsync(session, request, ct);

        states.Put(sessionId, run);
        if (ended)
        {
            if (webhook) outbox.Notify();
            LogEnded(logger, sessionId, phase, run.Step);
        }
        return result;
    }

    /// <summary>Adds the end event, the release and the webhook delivery to the rows; true if a delivery was added.</summary>
    private async Task<bool> EndRowsAsync(
        List<object> rows, Session session, CompiledVersion version, string phase, EvidenceView evidence, string evidenceJson,
        int step, DateTimeOffset now, CancellationToken ct)
    {
        var type = phase == Phases.Released ? EventTypes.SessionReleased : EventTypes.SessionFailed;
        rows.Add(new SessionEvent
        {
            ProjectId = session.ProjectId, SessionId = session.Id, WorkerRef = session.WorkerRef,
            Type = type, Step = step, At = now, DataJson = evidenceJson,
        });
        if (phase == Phases.Released)
        {
            rows.Add(new Release
            {
                ProjectId = session.ProjectId, SessionId = session.Id, WorkerRef = session.WorkerRef,
                ModelVersion = version.Number, ReleasedAt = now, EvidenceJson = evidenceJson,
            });
        }
        var project = await HotQueries.ProjectAsync(db, projectRows, session.ProjectId, ct)
            ?? throw new InvalidOperationException($"Session {session.Id} belongs to no project.");
        if (Outbox.Message(project, type, now, new SessionEndedData(
                session.ProjectId, session.Id, session.WorkerRef, phase, version.Number, evidence)) is not { } message)
            return false;
        rows.Add(message);
        return true;
    }

    /// <summary>A step already answered: the same body gets the stored response, a different one 409.</summary>
    private async Task<AnswerResult> ReplayedAsync(Session session, AnswerRequest request, CancellationToken ct)
    {
        var stored = await db.Events.AsNoTracking()
            .Where(e => e.SessionId == session.Id && e.Type == EventTypes.Answer && e.Step == request.Step)
            .Select(e => e.DataJson).FirstOrDefaultAsync(ct);
        var data = stored is null ? null : JsonSerializer.Deserialize<AnswerEventData>(stored, Json.Options);
        if (data is null)
            throw StepConflict(session, $"Step {request.Step} is not the current step.");
        if (data.ItemRef != request.ItemRef || data.Label != request.Label)
        {
            var current = await db.Sessions.AsNoTracking().Where(s => s.Id == session.Id).Select(s => s.Step).FirstOrDefaultAsync(ct);
            throw ApiProblemException.Conflict($"Step {request.Step} was already answered differently; answers cannot be changed.")
                .With("currentStep", current);
        }
        return data.Response;
    }

    /// <summary>
    /// What a test answer adds to the exposure counts: its item, unless this session answered it before (a retake
    /// may reuse items), and the tested-session count on the session's first test answer.
    /// </summary>
    private static List<(string, string)> Exposures(string projectId, CompiledVersion version, SessionRun run, int item)
    {
        var counts = new List<(string, string)>(2);
        if (run.Evidence().TestAnswers.Count(a => a.Item == item) == 1) counts.Add((projectId, version.Model.ItemIds[item]));
        if (run.TestAnswered == 1) counts.Add((projectId, Exposure.TestExposure.TestedSessions));
        return counts;
    }

    private static AnswerResult Result(CompiledVersion version, SessionRun run, AnswerOutcome outcome, int item)
    {
        var phase = SessionEngine.PhaseName(run.Phase);
        if (outcome.WasTeaching)
        {
            return new AnswerResult
            {
                Correct = outcome.Correct,
                Label = version.Model.Labels[outcome.TrueLabel],
                Explanation = version.Explanations[item],
                PredictedError = outcome.PredictedError,
                Phase = phase,
                Step = run.Step,
            };
        }
        // Test answers get no truth, no score and no belief figure, only that they were recorded.
        return new AnswerResult
        {
            Recorded = true,
            Retake = run.Phase == SessionPhase.Teaching ? true : null,
            Phase = phase,
            Step = run.Step,
        };
    }

    private static ApiProblemException StepConflict(Session session, string detail) =>
        ApiProblemException.Conflict(detail).With("currentStep", session.Step).With("phase", session.Phase);

    private static string Clip(string s) => s.Length <= 40 ? s : s[..40] + "…";

    [LoggerMessage(Level = LogLevel.Information, Message = "Session {SessionId} ended {Phase} after {Steps} answers")]
    private static partial void LogEnded(ILogger logger, string sessionId, string phase, int steps);
}

/// <summary>The data of an answer event: enough to replay the session and to repeat the exact response.</summary>
public sealed record AnswerEventData(
    int Item, string ItemId, string ItemRef, string Label, int LabelIndex, bool Correct, string Phase, AnswerResult Response);
