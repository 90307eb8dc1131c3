using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Core.Teaching;
using TeachServe.Server.Annotate;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Events;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Sessions;

public static class SessionsApi
{
    public static RouteGroupBuilder MapSessions(this IEndpointRouteBuilder api)
    {
        var project = api.MapGroup("/projects/{projectId}/sessions").WithTags("Sessions");
        project.MapPost("/", StartSession).RequireKey(KeyRole.Embed, KeyRole.Owner).WithName("startSession")
            .Problem(StatusCodes.Status409Conflict, "The project has no ready model version yet.")
            .Problem(StatusCodes.Status422UnprocessableEntity, "'workerRef' is empty, too long or not printable.")
            .WithSummary("Start the onboarding session of a worker on the newest ready model version; for a worker with an active session, return it (with a new token only when the body says resume: true).");
        project.MapGet("/", ListSessions).RequireKey(KeyRole.Owner).WithName("listSessions")
            .Problem(StatusCodes.Status400BadRequest, "'phase', 'cursor' or 'limit' is not valid.")
            .WithSummary("Sessions of the project, oldest first, optionally of one phase; cursor-paged.");

        api.MapGet("/projects/{projectId}/sessions.csv", ExportSessionsCsv).WithTags("Sessions").RequireKey(KeyRole.Owner)
            .WithName("exportSessionsCsv").Produces(StatusCodes.Status200OK, contentType: "text/csv")
            .Problem(StatusCodes.Status404NotFound, "No such project.")
            .WithSummary("Every session of the project as CSV, one row per session, oldest first (test totals over all attempts).");

        var session = api.MapGroup("/sessions/{sessionId}").WithTags("Sessions");
        session.MapGet("/next", GetNext).RequireKey(KeyRole.Session).WithName("getNextItem")
            .WithSummary("The item to answer now; asking again before answering returns the same item.");
        session.MapPost("/answers", PostAnswer).RequireKey(KeyRole.Session).WithName("postAnswer")
            .Problem(StatusCodes.Status409Conflict, "Not the current step, a different answer to an answered step, the wrong itemRef, or an ended session; currentStep and phase say where the session is.")
            .Problem(StatusCodes.Status422UnprocessableEntity, "The label is not one of the project's labels.")
            .WithSummary("Answer the current step; retry-safe (the same step and body get the same response).");
        session.MapGet("/", GetSession).RequireKey(KeyRole.Session, KeyRole.Owner).WithName("getSession")
            .Problem(StatusCodes.Status404NotFound, "No such session, or one of another project or token.")
            .WithSummary("Phase, counts and predicted error; after the end, the evidence.");
        return session;
    }

    public static async Task<Results<Created<SessionStarted>, Ok<SessionStarted>, ProblemHttpResult>> StartSession(
        string projectId, StartSessionRequest body, HttpRequest http, TeachServeDb db, TimeProvider time,
        ModelVersionCache versions, SessionStateCache states, AnswerCommitLoop writer, IOptions<TeachServeOptions> options,
        IOptions<AnnotateOptions> page, SqliteRowReader<Projects.Project> projectRows, CancellationToken ct)
    {
        var workerRef = body.WorkerRef;
        if (workerRef.Length is 0 or > SessionLimits.WorkerRefLength || workerRef.Any(char.IsControl))
            return Problems.Unprocessable($"'workerRef' must be 1 to {SessionLimits.WorkerRefLength} printable characters.");
        // With a project's key the project exists: the key check has just read its row and the key filter matched it
        // to the route. The admin key is of no project, so for it the project is looked up.
        if (http.HttpContext.User.Role() == KeyRole.Admin && await HotQueries.ProjectKeysAsync(db, projectRows, projectId, ct) is null)
            return Problems.NotFound("No such project.");

        var baseUrl = BaseUrl(http, options.Value);
        var (created, started) = await StartAsync(db, time, versions, states, writer, projectId, workerRef, baseUrl, ct, page.Value.LaunchCodeLifetime, body.Resume);
        return created ? TypedResults.Created($"/api/v1/sessions/{started.SessionId}", started) : TypedResults.Ok(started);
    }

    /// <summary>The server's address as annotators reach it: the configured public one, else the request's.</summary>
    public static string BaseUrl(HttpRequest http, TeachServeOptions options) =>
        options.PublicBaseUrl?.TrimEnd('/') ?? $"{http.Scheme}://{http.Host}";

    /// <summary>Starts a session for the worker, or returns its active one (created = false).</summary>
    /// <param name="launchLifetime">How long the launch link's one-time code works (default: one hour).</param>
    /// <param name="resume">For an active session: retire its token and issue a new one; otherwise it comes back without a token.</param>
    public static async Task<(bool Created, SessionStarted Session)> StartAsync(
        TeachServeDb db, TimeProvider time, ModelVersionCache versions, SessionStateCache states, AnswerCommitLoop writer,
        string projectId, string workerRef, string baseUrl, CancellationToken ct, TimeSpan? launchLifetime = null, bool resume = false)
    {
        var lifetime = launchLifetime ?? new AnnotateOptions().LaunchCodeLifetime;
        if (await ResumeAsync(db, time, projectId, workerRef, baseUrl, lifetime, resume, ct) is { } resumed) return (false, resumed);

        var number = await HotQueries.NewestReadyVersionAsync(db, projectId, ct)
            ?? throw ApiProblemException.Conflict("The project has no ready model version yet; the owner compiles one with POST /versions.");
        var version = await versions.GetAsync(projectId, number, ct);

        var now = time.GetUtcNow();
        var id = Ids.NewSessionId(time);
        var token = ApiKeys.NewSessionToken(id);
        var seed = BitConverter.ToInt64(System.Security.Cryptography.RandomNumberGenerator.GetBytes(8));
        var session = new Session
        {
            Id = id, ProjectId = projectId, WorkerRef = workerRef, IsActive = true, Phase = Phases.Teaching,
            Step = 0, ModelVersion = version.Number, Policy = version.Settings.Policy, Seed = seed,
            TokenHash = ApiKeys.Hash(token), RefKey = ItemRefs.NewKey(), CreatedAt = now, LastSeenAt = now,
        };
        if (await Experiments.ExperimentArms.AssignAsync(db, projectId, workerRef, ct) is { } arm)
        {
            session.ExperimentId = arm.ExperimentId;
            session.ArmIndex = arm.Index;
            session.ArmJson = Json.Serialize(arm.Definition);
            session.Policy = arm.Definition.Policy;
        }
        // Exposure control: K fixed now from the counts so far, and kept in the start event for replays.
        var administration = await Exposure.ExposureCounts.AdministrationAsync(db, version, ct);
        var run = SessionRun.Start(version.Model, SessionEngine.Options(version, session, administration));
        session.Phase = SessionEngine.PhaseName(run.Phase);
        session.PredictedError = run.PredictedError;
        var (launchUrl, launchCode) = LaunchCodes.New(time, baseUrl, id, token, lifetime);
        var started = new SessionEvent
        {
            ProjectId = projectId, SessionId = id, WorkerRef = workerRef, Type = EventTypes.SessionStarted, At = now,
            DataJson = Json.Serialize(new
            {
                modelVersion = version.Number, policy = session.Policy, seed, predictedError = run.PredictedError,
                experimentId = session.ExperimentId, arm = session.ArmIndex,
                armName = session.ArmIndex is { } a ? Json.Deserialize<Core.Experiments.ArmDefinition>(session.ArmJson!).Name : null,
                testAdministration = Exposure.ExposureCounts.ForEvent(version, administration),
            }),
        };
        try
        {
            // Through the single writer, like answers: one commit for many starts, and no wait for the write lock.
            await writer.CommitAsync(new PendingRows { Rows = [session, launchCode, started] }, ct);
        }
        catch (DbUpdateException)
        {
            // A concurrent start for the same worker won (unique active index); hand out that session.
            if (await ResumeAsync(db, time, projectId, workerRef, baseUrl, lifetime, resume, ct) is { } raced) return (false, raced);
            throw;
        }
        states.Put(id, run);
        return (true, new SessionStarted(id, token, launchUrl, session.Phase, 0, version.Number));
    }

    /// <summary>
    /// The worker's active session. Without <paramref name="resume"/> it comes back without a token, and the token
    /// the annotator holds keeps working: whoever holds the embed key cannot take over a running session by starting
    /// it again. With it, a fresh token replaces the old one (tokens are stored hashed, so the old one cannot be shown
    /// again) and a <c>session.resumed</c> event records the takeover.
    /// </summary>
    private static async Task<SessionStarted?> ResumeAsync(
        TeachServeDb db, TimeProvider time, string projectId, string workerRef, string baseUrl, TimeSpan lifetime, bool resume, CancellationToken ct)
    {
        var active = await HotQueries.ActiveSessionAsync(db, projectId, workerRef, ct);
        if (active is null) return null;
        if (!resume) return new SessionStarted(active.Id, null, null, active.Phase, active.Step, active.ModelVersion);
        var token = ApiKeys.NewSessionToken(active.Id);
        var hash = ApiKeys.Hash(token);
        // The new token starts a new idle period; otherwise an idle worker's new link would arrive expired.
        var now = time.GetUtcNow();
        await db.Sessions.Where(s => s.Id == active.Id)
            .ExecuteUpdateAsync(u => u.SetProperty(s => s.TokenHash, hash).SetProperty(s => s.LastSeenAt, now), ct);
        await LaunchCodes.ForgetAsync(db, time, active.Id, ct);
        var launchUrl = LaunchCodes.Issue(db, time, baseUrl, active.Id, token, lifetime);
        db.Events.Add(new SessionEvent
        {
            ProjectId = projectId, SessionId = active.Id, WorkerRef = workerRef, Type = EventTypes.SessionResumed, At = now,
            DataJson = Json.Serialize(new { step = active.Step, phase = active.Phase }),
        });
        await db.SaveChangesAsync(ct);
        return new SessionStarted(active.Id, token, launchUrl, active.Phase, active.Step, active.ModelVersion);
    }

    public static async Task<Results<Ok<NextItem>, ProblemHttpResult>> GetNext(
        string sessionId, HttpRequest http, TeachServeDb db, SessionEngine engine, SessionStateCache states, AuthenticatedSession authenticated,
        IOptions<TeachServeOptions> options, CancellationToken ct)
    {
        using var held = await states.LockAsync(sessionId, ct);
        var session = await authenticated.RowAsync(db, states, sessionId, ct);
        if (session is null) return Problems.NotFound("No such session.");
        if (!session.IsActive) return TypedResults.Ok(new NextItem(session.Step, session.Phase, null));
        var (version, run) = await engine.LoadAsync(db, session, ct);
        var item = run.CurrentItem;
        return TypedResults.Ok(new NextItem(session.Step, session.Phase,
            new ItemForAnnotator(ItemRefs.For(session.RefKey, session.Step, item),
                Media.MediaApi.ForAnnotator(version, session, item, BaseUrl(http, options.Value)), version.Model.Labels)));
    }

    public static async Task<Ok<AnswerResult>> PostAnswer(
        string sessionId, AnswerRequest body, AnswerWriter writer, CancellationToken ct) =>
        TypedResults.Ok(await writer.WriteAsync(sessionId, body, ct));

    public static async Task<Results<Ok<SessionView>, ProblemHttpResult>> GetSession(
        string sessionId, HttpContext http, TeachServeDb db, CancellationToken ct)
    {
        var session = await db.Sessions.AsNoTracking().FirstOrDefaultAsync(s => s.Id == sessionId, ct);
        var role = http.User.Role();
        if (session is null || (role == KeyRole.Owner && session.ProjectId != http.User.ProjectId()))
            return Problems.NotFound("No such session.");
        return TypedResults.Ok(View(session, forAnnotator: role == KeyRole.Session));
    }

    public static async Task<Results<Ok<SessionPage>, ProblemHttpResult>> ListSessions(
        string projectId, string? phase, string? cursor, int? limit, TeachServeDb db, CancellationToken ct)
    {
        if (phase is not null && !Phases.All.Contains(phase))
            return Problems.BadRequest($"'phase' must be one of {string.Join(", ", Phases.All)}.");
        var after = Cursor.Decode(cursor, "cursor");
        var take = Cursor.Limit(limit);
        if (!await db.Projects.AnyAsync(p => p.Id == projectId, ct)) return Problems.NotFound("No such project.");
        var query = db.Sessions.AsNoTracking().Where(s => s.ProjectId == projectId);
        if (phase is not null) query = query.Where(s => s.Phase == phase);
        if (after is not null) query = query.Where(s => string.Compare(s.Id, after) > 0);
        var rows = await query.OrderBy(s => s.Id).Take(take + 1).ToListAsync(ct);
        var page = rows.Take(take).Select(s => View(s, forAnnotator: false)).ToList();
        return TypedResults.Ok(new SessionPage(page, rows.Count > take ? Cursor.Encode(page[^1].SessionId) : null));
    }

    public static async Task<Results<ContentHttpResult, ProblemHttpResult>> ExportSessionsCsv(
        string projectId, HttpResponse response, TeachServeDb db, CancellationToken ct)
    {
        if (!await db.Projects.AnyAsync(p => p.Id == projectId, ct)) return Problems.NotFound("No such project.");
        response.Headers.ContentDisposition = $"attachment; filename=\"{projectId}-sessions.csv\"";
        return TypedResults.Text(await SessionsCsv.WriteAsync(db, projectId, ct), "text/csv; charset=utf-8");
    }

    public static SessionView View(Session s, bool forAnnotator) => new()
    {
        SessionId = s.Id,
        WorkerRef = s.WorkerRef,
        Phase = s.Phase,
        Step = s.Step,
        ItemsTaught = s.TaughtCount,
        TestAnswered = s.TestAnswered,
        // The annotator sees the belief's figure only before any test answer could have moved it.
        PredictedError = forAnnotator && (s.Phase != Phases.Teaching || s.TestAnswered > 0) ? null : s.PredictedError,
        ModelVersion = s.ModelVersion,
        Policy = s.Policy,
        CreatedAt = s.CreatedAt,
        EndedAt = s.EndedAt,
        Evidence = forAnnotator || s.EvidenceJson is null ? null : Json.Deserialize<EvidenceView>(s.EvidenceJson),
    };
}
