using System.Text.Json;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Teaching;
using TeachServe.Server.Annotate;
using TeachServe.Server.Auth;
using TeachServe.Server.Events;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Releases;
using TeachServe.Server.Sessions.Store;
using TeachServe.Server.Versions;
using TeachServe.Server.Webhooks;

namespace TeachServe.Server.Sessions;

/// <summary>What starting a session needs.</summary>
/// <param name="BaseUrl">The server's address as annotators reach it, for the launch link.</param>
/// <param name="ProjectKnown">True when the caller already knows the project exists (a project's key was checked against it).</param>
/// <param name="LaunchLifetime">How long the launch link's one-time code works.</param>
/// <param name="Resume">For an active session: retire its token and issue a new one; otherwise it comes back without a token.</param>
/// <param name="Purpose">Onboarding, or a refresher of a released annotator (<see cref="SessionPurposes"/>).</param>
public sealed record StartSessionInput(
    string ProjectId, string WorkerRef, string BaseUrl, bool ProjectKnown, TimeSpan LaunchLifetime, bool Resume = false,
    string Purpose = SessionPurposes.Onboarding);

/// <summary>A started session, or the worker's active one (<see cref="Created"/> false).</summary>
public sealed record StartSessionResult(bool Created, SessionStarted Session);

/// <summary>The result of a session operation: a value, or why the request was refused.</summary>
public readonly record struct SessionOutcome<T>(T? Value, SessionRefusal? Refusal) where T : class
{
    public static implicit operator SessionOutcome<T>(T value) => new(value, null);
    public static implicit operator SessionOutcome<T>(SessionRefusal refusal) => new(null, refusal);
}

/// <summary>
/// An expected refusal of a session operation (a client's mistake or a state it cannot change), with the HTTP status
/// it is answered with; a conflict over a step also says where the session is (<c>currentStep</c>, <c>phase</c>).
/// </summary>
public sealed record SessionRefusal(int Status, string Detail, int? CurrentStep = null, string? Phase = null)
{
    public static SessionRefusal BadRequest(string detail) => new(StatusCodes.Status400BadRequest, detail);
    public static SessionRefusal NotFound(string detail) => new(StatusCodes.Status404NotFound, detail);
    public static SessionRefusal Conflict(string detail, int? currentStep = null, string? phase = null) =>
        new(StatusCodes.Status409Conflict, detail, currentStep, phase);
    public static SessionRefusal Invalid(string detail) => new(StatusCodes.Status422UnprocessableEntity, detail);

    /// <summary>The refusal as RFC 9457 problem details, written through the server's problem details service.</summary>
    public ProblemHttpResult Problem()
    {
        Dictionary<string, object?>? where = null;
        if (CurrentStep is { } step) (where ??= [])["currentStep"] = step;
        if (Phase is { } phase) (where ??= [])["phase"] = phase;
        return Status switch
        {
            StatusCodes.Status400BadRequest => Problems.BadRequest(Detail),
            StatusCodes.Status404NotFound => Problems.NotFound(Detail),
            StatusCodes.Status409Conflict => Problems.Conflict(Detail, where),
            _ => Problems.Unprocessable(Detail, where),
        };
    }
}

/// <summary>
/// What the sessions feature does, for the API, the annotator page, the demo and the console alike: start a session,
/// the item to answer now, answer it, view and list sessions. Expected refusals come back as a
/// <see cref="SessionRefusal"/>, never as an exception.
/// <para>
/// The one write path of an answer: under the session's lock, check the step, advance the engine, then hand the
/// rows to the single writer (<see cref="GroupCommitWriter"/>), which in one transaction updates the session row
/// (only if its step is still the one we read: optimistic concurrency), appends the answer event holding the exact
/// response, and on the gate's decision the end event, the release and the webhook outbox row. The response is sent
/// only after the commit, so an acknowledged answer is never lost, and a retry of the same step is answered from the
/// stored event.
/// </para>
/// </summary>
public sealed partial class SessionOperations(
    TeachServeDb db, TimeProvider time, ModelVersionCache versions, SessionStateCache states, SessionLoader loader,
    SessionReads reads, GroupCommitWriter writer, OutboxSignal outbox, LiveQuality.Refreshers refreshers, ILogger<SessionOperations> logger)
{
    /// <summary>Starts a session for the worker on the project's newest ready model version, or returns its active one.</summary>
    public async Task<SessionOutcome<StartSessionResult>> StartAsync(StartSessionInput input, CancellationToken ct)
    {
        var (projectId, workerRef) = (input.ProjectId, input.WorkerRef);
        if (workerRef.Length is 0 or > SessionLimits.WorkerRefLength || workerRef.Any(char.IsControl))
            return SessionRefusal.Invalid($"'workerRef' must be 1 to {SessionLimits.WorkerRefLength} printable characters.");
        if (!input.ProjectKnown && await reads.ProjectKeysAsync(db, projectId, ct) is null)
            return SessionRefusal.NotFound("No such project.");
        if (await ResumeAsync(input, ct) is { } resumed) return new StartSessionResult(false, resumed);

        if (!SessionPurposes.All.Contains(input.Purpose))
            return SessionRefusal.Invalid($"'purpose' must be one of {string.Join(", ", SessionPurposes.All)}.");
        var refresher = input.Purpose == SessionPurposes.Refresher;
        var now = time.GetUtcNow();
        var id = Ids.NewSessionId(time);
        CompiledVersion version;
        LiveQuality.RefresherPlan? plan = null;
        if (refresher)
        {
            // On the version the annotator was released on: the live belief is over its hypotheses.
            var planned = await refreshers.PlanAsync(projectId, workerRef, id, ct);
            if (!planned.Succeeded) return SessionRefusal.Conflict(planned.Problem.ProblemDetails.Detail!);
            plan = planned.Value;
            version = plan.Version;
        }
        else
        {
            if (await reads.NewestReadyVersionAsync(db, projectId, ct) is not { } number)
                return SessionRefusal.Conflict("The project has no ready model version yet; the owner compiles one with POST /versions.");
            version = await versions.GetAsync(projectId, number, ct);
        }

        var token = ApiKeys.NewSessionToken(id);
        var seed = BitConverter.ToInt64(System.Security.Cryptography.RandomNumberGenerator.GetBytes(8));
        var session = new Session
        {
            Id = id, ProjectId = projectId, WorkerRef = workerRef, IsActive = true, Phase = Phases.Teaching,
            Step = 0, ModelVersion = version.Number, Policy = refresher ? Core.Projects.PolicyNames.Adaptive : version.Settings.Policy, Seed = seed,
            TokenHash = ApiKeys.Hash(token), RefKey = ItemRefs.NewKey(), CreatedAt = now, LastSeenAt = now, Purpose = input.Purpose,
        };
        // A refresher is no new onboarding: it is not assigned to a running experiment's arms.
        if (!refresher && await Experiments.ExperimentArms.AssignAsync(reads, db, projectId, workerRef, ct) is { } arm)
        {
            session.ExperimentId = arm.ExperimentId;
            session.ArmIndex = arm.Index;
            session.ArmJson = Json.Serialize(arm.Definition);
            session.Policy = arm.Definition.Policy;
        }
        // Exposure control: K fixed now from the counts so far, and kept in the start event for replays.
        var administration = await Exposure.ExposureCounts.AdministrationAsync(db, version, ct);
        // Onboarding sessions start on varied items (gate.openingVariety); a refresher starts where its belief says.
        var run = SessionRun.Start(version.Model, SessionLoader.Options(version, session, administration, plan?.Start, plan?.Weights));
        session.Phase = SessionViews.PhaseName(run.Phase);
        session.PredictedError = run.PredictedError;
        var (launchUrl, launchCode) = LaunchCodes.New(time, input.BaseUrl, id, token, input.LaunchLifetime);
        var started = new SessionEvent
        {
            ProjectId = projectId, SessionId = id, WorkerRef = workerRef, Type = EventTypes.SessionStarted, At = now,
            DataJson = Json.Serialize(new
            {
                modelVersion = version.Number, policy = session.Policy, seed, predictedError = run.PredictedError,
                experimentId = session.ExperimentId, arm = session.ArmIndex,
                armName = session.ArmIndex is { } a ? Json.Deserialize<Core.Experiments.ArmDefinition>(session.ArmJson!).Name : null,
                testAdministration = Exposure.ExposureCounts.ForEvent(version, administration),
                purpose = session.Purpose, refresherFrom = plan?.Start.FromSessionId, refresherLiveChecks = plan?.Start.LiveChecks,
                openingVariety = run.Options.Gate.OpeningVariety,
            }),
        };
        try
        {
            // Through the single writer, like answers: one commit for many starts, and no wait for the write lock.
            await writer.CommitAsync(new PendingRows { Rows = plan is null ? [session, launchCode, started] : [session, plan.Start, launchCode, started] }, ct);
        }
        catch (DbUpdateException)
        {
            // A concurrent start for the same worker won (unique active index); hand out that session.
            if (await ResumeAsync(input, ct) is { } raced) return new StartSessionResult(false, raced);
            throw;
        }
        states.Put(id, run);
        return new StartSessionResult(true, new SessionStarted(id, token, launchUrl, session.Phase, 0, version.Number));
    }

    /// <summary>
    /// The worker's active session. Without <see cref="StartSessionInput.Resume"/> it comes back without a token, and
    /// the token the annotator holds keeps working: whoever holds the embed key cannot take over a running session by
    /// starting it again. With it, a fresh token replaces the old one (tokens are stored hashed, so the old one cannot
    /// be shown again) and a <c>session.resumed</c> event records the takeover.
    /// </summary>
    private async Task<SessionStarted?> ResumeAsync(StartSessionInput input, CancellationToken ct)
    {
        var active = await reads.ActiveSessionAsync(db, input.ProjectId, input.WorkerRef, ct);
        if (active is null) return null;
        if (!input.Resume) return new SessionStarted(active.Id, null, null, active.Phase, active.Step, active.ModelVersion);
        var token = ApiKeys.NewSessionToken(active.Id);
        var hash = ApiKeys.Hash(token);
        // The new token starts a new idle period; otherwise an idle worker's new link would arrive expired.
        var now = time.GetUtcNow();
        await db.Sessions.Where(s => s.Id == active.Id)
            .ExecuteUpdateAsync(u => u.SetProperty(s => s.TokenHash, hash).SetProperty(s => s.LastSeenAt, now), ct);
        await LaunchCodes.ForgetAsync(db, time, active.Id, ct);
        var launchUrl = LaunchCodes.Issue(db, time, input.BaseUrl, active.Id, token, input.LaunchLifetime);
        db.Events.Add(new SessionEvent
        {
            ProjectId = input.ProjectId, SessionId = active.Id, WorkerRef = input.WorkerRef, Type = EventTypes.SessionResumed, At = now,
            DataJson = Json.Serialize(new { step = active.Step, phase = active.Phase }),
        });
        await db.SaveChangesAsync(ct);
        return new SessionStarted(active.Id, token, launchUrl, active.Phase, active.Step, active.ModelVersion);
    }

    /// <summary>The item to answer now (the same until it is answered); none once the session has ended.</summary>
    /// <param name="authenticated">The row this request's token check read (<see cref="SessionRowFeature"/>), if any.</param>
    public async Task<SessionOutcome<NextItem>> NextAsync(string sessionId, Session? authenticated, string baseUrl, CancellationToken ct)
    {
        using var held = await states.LockAsync(sessionId, ct);
        var session = await RowAsync(sessionId, authenticated, ct);
        if (session is null) return SessionRefusal.NotFound("No such session.");
        if (!session.IsActive) return new NextItem(session.Step, session.Phase, null);
        var (version, run) = await loader.LoadAsync(db, session, ct);
        var item = run.CurrentItem;
        return new NextItem(session.Step, session.Phase,
            new ItemForAnnotator(ItemRefs.For(session.RefKey, session.Step, item),
                Media.MediaApi.ForAnnotator(version, session, item, baseUrl), version.Model.Labels));
    }

    /// <summary>Answers the current step; retry-safe (the same step and body get the same result).</summary>
    /// <param name="authenticated">The row this request's token check read (<see cref="SessionRowFeature"/>), if any.</param>
    public async Task<SessionOutcome<AnswerResult>> AnswerAsync(string sessionId, AnswerRequest request, Session? authenticated, CancellationToken ct)
    {
        if (request.Step < 0) return SessionRefusal.BadRequest("'step' must be 0 or more.");
        using var held = await states.LockAsync(sessionId, ct);
        var session = await RowAsync(sessionId, authenticated, ct);
        if (session is null) return SessionRefusal.NotFound("No such session.");

        if (request.Step < session.Step) return await ReplayedAsync(session, request, ct);
        if (request.Step > session.Step || !session.IsActive)
            return StepConflict(session, session.IsActive
                ? $"Step {request.Step} is not the current step; answer step {session.Step}."
                : $"The session has ended ({session.Phase}).");

        var (version, run) = await loader.LoadAsync(db, session, ct);
        var item = run.CurrentItem;
        if (!ItemRefs.Matches(session.RefKey, session.Step, item, request.ItemRef))
            return StepConflict(session, "The itemRef is not the item of this step; ask for the next item again.");
        if (!version.LabelIndex.TryGetValue(request.Label, out var labelIndex))
            return SessionRefusal.Invalid($"'{Clip(request.Label)}' is not one of the labels: {string.Join(", ", version.Model.Labels)}.");

        // From here the cached run is ahead of the database until the commit; drop it on any failure.
        states.Evict(sessionId);
        var phaseBefore = run.Phase;
        var outcome = run.Answer(labelIndex);
        var result = SessionViews.Result(version, run, outcome, item);
        var now = time.GetUtcNow();
        var ended = run.IsEnded;
        var evidence = ended ? SessionViews.Evidence(version, run) : null;
        var evidenceJson = evidence is null ? null : SessionViews.EvidenceJson(evidence);
        var phase = SessionViews.PhaseName(run.Phase);

        var rows = new List<object>
        {
            new SessionEvent
            {
                ProjectId = session.ProjectId, SessionId = sessionId, WorkerRef = session.WorkerRef,
                Type = EventTypes.Answer, Step = session.Step, At = now,
                DataJson = Json.Serialize(new AnswerEventData(
                    item, version.Model.ItemIds[item], request.ItemRef, request.Label, labelIndex,
                    outcome.Correct, SessionViews.PhaseName(phaseBefore), result)),
            },
        };
        var webhook = ended && await EndRowsAsync(rows, session, version, phase, evidence!, evidenceJson!, run.Step, now, ct);

        // The lock stays held until the commit, so this node never has two writes of one session in flight.
        var written = await writer.CommitAsync(new PendingAnswer
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
            // Its own transaction after the answer's: a crash in between leaves the refresher for the next batch of live
            // checks or view of the monitor to apply (Refreshers.ApplyEndedAsync is idempotent).
            if (session.Purpose == SessionPurposes.Refresher) await refreshers.ApplyEndedAsync(session.ProjectId, session.WorkerRef, CancellationToken.None);
        }
        return result;
    }

    /// <summary>The session for its annotator or its project's owner (or the admin); another project's owner gets none.</summary>
    public async Task<SessionOutcome<SessionView>> ViewAsync(string sessionId, KeyRole role, string? callerProjectId, CancellationToken ct)
    {
        var session = await db.Sessions.AsNoTracking().FirstOrDefaultAsync(s => s.Id == sessionId, ct);
        if (session is null || (role == KeyRole.Owner && session.ProjectId != callerProjectId))
            return SessionRefusal.NotFound("No such session.");
        return SessionViews.Of(session, forAnnotator: role == KeyRole.Session);
    }

    /// <summary>One page of the project's sessions, oldest first, optionally of one phase.</summary>
    public async Task<SessionOutcome<SessionPage>> ListAsync(string projectId, string? phase, string? cursor, int? limit, CancellationToken ct)
    {
        if (phase is not null && !Phases.All.Contains(phase))
            return SessionRefusal.BadRequest($"'phase' must be one of {string.Join(", ", Phases.All)}.");
        var read = Cursor.Read(cursor, "cursor");
        if (!read.Succeeded) return SessionRefusal.BadRequest(read.Problem.ProblemDetails.Detail!);
        var size = Cursor.PageSize(limit);
        if (!size.Succeeded) return SessionRefusal.BadRequest(size.Problem.ProblemDetails.Detail!);
        var (after, take) = (read.Value, size.Value);
        if (!await db.Projects.AnyAsync(p => p.Id == projectId, ct)) return SessionRefusal.NotFound("No such project.");
        var query = db.Sessions.AsNoTracking().Where(s => s.ProjectId == projectId);
        if (phase is not null) query = query.Where(s => s.Phase == phase);
        if (after.Length > 0) query = query.Where(s => string.Compare(s.Id, after) > 0);
        var rows = await query.OrderBy(s => s.Id).Take(take + 1).ToListAsync(ct);
        var page = rows.Take(take).Select(s => SessionViews.Of(s, forAnnotator: false)).ToList();
        return new SessionPage(page, rows.Count > take ? Cursor.Encode(page[^1].SessionId) : null);
    }

    /// <summary>Every session of the project as CSV; refused for a project that does not exist.</summary>
    public async Task<SessionOutcome<string>> CsvAsync(string projectId, CancellationToken ct)
    {
        if (!await db.Projects.AnyAsync(p => p.Id == projectId, ct)) return SessionRefusal.NotFound("No such project.");
        return await SessionsCsv.WriteAsync(db, projectId, ct);
    }

    /// <summary>
    /// The session's row for a request holding the session's lock. The row read by the token check is used unless
    /// this node has committed a later step since (a concurrent request of the same session, e.g. a retry, finished
    /// first): then it is read again. A later step written by another node is caught as before by the optimistic step
    /// check of the write.
    /// </summary>
    private async Task<Session?> RowAsync(string sessionId, Session? authenticated, CancellationToken ct)
    {
        if (authenticated is { } row && string.Equals(row.Id, sessionId, StringComparison.Ordinal) && !states.HasLaterStep(sessionId, row.Step))
            return row;
        return await reads.SessionAsync(db, sessionId, ct);
    }

    /// <summary>Adds the end event, the release and the webhook delivery to the rows; true if a delivery was added.</summary>
    private async Task<bool> EndRowsAsync(
        List<object> rows, Session session, CompiledVersion version, string phase, EvidenceView evidence, string evidenceJson,
        int step, DateTimeOffset now, CancellationToken ct)
    {
        var refresher = session.Purpose == SessionPurposes.Refresher;
        var type = (phase == Phases.Released, refresher) switch
        {
            (true, false) => EventTypes.SessionReleased,
            (false, false) => EventTypes.SessionFailed,
            (true, true) => EventTypes.RefresherPassed,
            (false, true) => EventTypes.RefresherFailed,
        };
        rows.Add(new SessionEvent
        {
            ProjectId = session.ProjectId, SessionId = session.Id, WorkerRef = session.WorkerRef,
            Type = type, Step = step, At = now, DataJson = evidenceJson,
        });
        // A passed refresher returns a released annotator to reliable (their monitor, after the commit); it is no new release.
        if (phase == Phases.Released && !refresher)
        {
            rows.Add(new Release
            {
                ProjectId = session.ProjectId, SessionId = session.Id, WorkerRef = session.WorkerRef,
                ModelVersion = version.Number, ReleasedAt = now, EvidenceJson = evidenceJson,
            });
        }
        var project = await reads.ProjectAsync(db, session.ProjectId, ct)
            ?? throw new InvalidOperationException($"Session {session.Id} belongs to no project.");
        if (Outbox.Message(project, type, now, new SessionEndedData(
                session.ProjectId, session.Id, session.WorkerRef, phase, version.Number, evidence)) is not { } message)
            return false;
        rows.Add(message);
        return true;
    }

    /// <summary>A step already answered: the same body gets the stored response, a different one 409.</summary>
    private async Task<SessionOutcome<AnswerResult>> ReplayedAsync(Session session, AnswerRequest request, CancellationToken ct)
    {
        var stored = await db.Events.AsNoTracking()
            .Where(e => e.SessionId == session.Id && e.Type == EventTypes.Answer && e.Step == request.Step)
            .Select(e => e.DataJson).FirstOrDefaultAsync(ct);
        var data = stored is null ? null : JsonSerializer.Deserialize<AnswerEventData>(stored, Json.Options);
        if (data is null)
            return StepConflict(session, $"Step {request.Step} is not the current step.");
        if (data.ItemRef != request.ItemRef || data.Label != request.Label)
        {
            var current = await db.Sessions.AsNoTracking().Where(s => s.Id == session.Id).Select(s => s.Step).FirstOrDefaultAsync(ct);
            return SessionRefusal.Conflict($"Step {request.Step} was already answered differently; answers cannot be changed.", current);
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

    private static SessionRefusal StepConflict(Session session, string detail) => SessionRefusal.Conflict(detail, session.Step, session.Phase);

    private static string Clip(string s) => s.Length <= 40 ? s : s[..40] + "…";

    [LoggerMessage(Level = LogLevel.Information, Message = "Session {SessionId} ended {Phase} after {Steps} answers")]
    private static partial void LogEnded(ILogger logger, string sessionId, string phase, int steps);
}

/// <summary>The data of an answer event: enough to replay the session and to repeat the exact response.</summary>
public sealed record AnswerEventData(
    int Item, string ItemId, string ItemRef, string Label, int LabelIndex, bool Correct, string Phase, AnswerResult Response);
