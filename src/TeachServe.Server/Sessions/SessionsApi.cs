using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.Extensions.Options;
using TeachServe.Server.Annotate;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Sessions;

/// <summary>The routes of the sessions feature; each maps to one <see cref="SessionOperations"/> call.</summary>
public static class SessionsApi
{
    public static RouteGroupBuilder MapSessions(this IEndpointRouteBuilder api)
    {
        var project = api.MapGroup("/projects/{projectId}/sessions").WithTags("Sessions");
        project.MapPost("/", StartSession).RequireKey(KeyRole.Embed, KeyRole.Owner).WithName("startSession")
            .Problem(StatusCodes.Status409Conflict, "The project has no ready model version yet, or a refresher was asked for a worker never released in the project.")
            .Problem(StatusCodes.Status422UnprocessableEntity, "'workerRef' is empty, too long or not printable, or 'purpose' is not onboarding or refresher.")
            .WithSummary("Start the onboarding session of a worker on the newest ready model version, or with purpose: refresher a refresher of a released annotator; for a worker with an active session, return it (with a new token only when the body says resume: true).");
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
        string projectId, StartSessionRequest body, HttpContext http, SessionOperations sessions,
        IOptions<TeachServeOptions> options, IOptions<AnnotateOptions> page, CancellationToken ct)
    {
        // With a project's key the project exists: the key check has just read its row and the key filter matched it
        // to the route. The admin key is of no project, so for it the project is looked up.
        var input = new StartSessionInput(projectId, body.WorkerRef, BaseUrl(http.Request, options.Value),
            ProjectKnown: http.User.Role() != KeyRole.Admin, page.Value.LaunchCodeLifetime, body.Resume,
            body.Purpose ?? SessionPurposes.Onboarding);
        var outcome = await sessions.StartAsync(input, ct);
        if (outcome.Value is not { } start) return outcome.Refusal!.Problem();
        return start.Created ? TypedResults.Created($"/api/v1/sessions/{start.Session.SessionId}", start.Session) : TypedResults.Ok(start.Session);
    }

    /// <summary>The server's address as annotators reach it: the configured public one, else the request's.</summary>
    public static string BaseUrl(HttpRequest http, TeachServeOptions options) =>
        options.PublicBaseUrl?.TrimEnd('/') ?? $"{http.Scheme}://{http.Host}";

    public static async Task<Results<Ok<NextItem>, ProblemHttpResult>> GetNext(
        string sessionId, HttpContext http, SessionOperations sessions, IOptions<TeachServeOptions> options, CancellationToken ct) =>
        Respond(await sessions.NextAsync(sessionId, SessionRowFeature.Of(http), BaseUrl(http.Request, options.Value), ct));

    public static async Task<Results<Ok<AnswerResult>, ProblemHttpResult>> PostAnswer(
        string sessionId, AnswerRequest body, HttpContext http, SessionOperations sessions, CancellationToken ct) =>
        Respond(await sessions.AnswerAsync(sessionId, body, SessionRowFeature.Of(http), ct));

    public static async Task<Results<Ok<SessionView>, ProblemHttpResult>> GetSession(
        string sessionId, HttpContext http, SessionOperations sessions, CancellationToken ct) =>
        Respond(await sessions.ViewAsync(sessionId, http.User.Role(), http.User.ProjectId(), ct));

    public static async Task<Results<Ok<SessionPage>, ProblemHttpResult>> ListSessions(
        string projectId, string? phase, string? cursor, int? limit, SessionOperations sessions, CancellationToken ct) =>
        Respond(await sessions.ListAsync(projectId, phase, cursor, limit, ct));

    public static async Task<Results<ContentHttpResult, ProblemHttpResult>> ExportSessionsCsv(
        string projectId, HttpResponse response, SessionOperations sessions, CancellationToken ct)
    {
        var outcome = await sessions.CsvAsync(projectId, ct);
        if (outcome.Value is not { } csv) return outcome.Refusal!.Problem();
        response.Headers.ContentDisposition = $"attachment; filename=\"{projectId}-sessions.csv\"";
        return TypedResults.Text(csv, "text/csv; charset=utf-8");
    }

    private static Results<Ok<T>, ProblemHttpResult> Respond<T>(SessionOutcome<T> outcome) where T : class =>
        outcome.Value is { } value ? TypedResults.Ok(value) : outcome.Refusal!.Problem();
}
