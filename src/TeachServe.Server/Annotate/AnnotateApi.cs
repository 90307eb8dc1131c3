using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Sessions;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Annotate;

/// <summary>The two calls only the annotator page makes; answers go through the ordinary retry-safe answers API.</summary>
public static class AnnotateApi
{
    public static RouteGroupBuilder MapAnnotateApi(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/").WithTags("Annotator page");
        group.MapPost("/launch", Exchange).RequireRateLimiting(RateLimiting.CredentialPolicy).WithName("exchangeLaunchCode")
            .Problem(StatusCodes.Status410Gone, "The launch code was used already, has expired, or is incomplete.")
            .WithSummary("Trade the one-time code of a launch link for the session token (once; the code then stops working).");
        group.MapGet("/sessions/{sessionId}/page", GetPageState).RequireKey(KeyRole.Session).WithName("getPageState")
            .WithSummary("The annotator page's view of the current step: progress, the item (SVG sanitised), or how the session ended.");
        group.MapGet("/sessions/{sessionId}/guidance", GetGuidance).RequireKey(KeyRole.Session).WithName("getGuidance")
            .Problem(StatusCodes.Status404NotFound, "No such session.")
            .WithSummary("The owner's instructions and per-label guidance as safe HTML (from the project as it is now; empty when there are none).");
        return group;
    }

    public static async Task<Results<Ok<LaunchExchanged>, ProblemHttpResult>> Exchange(
        LaunchRequest body, HttpResponse response, TeachServeDb db, TimeProvider time, CancellationToken ct)
    {
        response.Headers.CacheControl = "no-store";
        return (await LaunchCodes.RedeemAsync(db, time, body.Code, ct)).Answer(TypedResults.Ok);
    }

    public static async Task<Results<Ok<GuidanceView>, ProblemHttpResult>> GetGuidance(string sessionId, TeachServeDb db, CancellationToken ct)
    {
        var project = await db.Sessions.AsNoTracking().Where(s => s.Id == sessionId)
            .Join(db.Projects.AsNoTracking(), s => s.ProjectId, p => p.Id, (_, p) => p).FirstOrDefaultAsync(ct);
        if (project is null) return Problems.NotFound("No such session.");
        var settings = ProjectOperations.Settings(project);
        var guidance = settings.Guidance;
        var instructions = string.IsNullOrWhiteSpace(guidance?.Instructions) ? null : GuidanceMarkdown.ToHtml(guidance.Instructions);
        var labels = settings.Labels
            .Where(l => guidance?.Labels?.TryGetValue(l, out var text) == true && !string.IsNullOrWhiteSpace(text))
            .Select(l => new LabelGuidance(l, GuidanceMarkdown.ToHtml(guidance!.Labels![l])))
            .ToList();
        return TypedResults.Ok(new GuidanceView(instructions, labels));
    }

    public static async Task<Results<Ok<AnnotatorPageState>, ProblemHttpResult>> GetPageState(
        string sessionId, HttpRequest http, TeachServeDb db, SessionOperations sessions, SessionLoader loader, SessionStateCache states,
        ModelVersionCache versions, IOptions<AnnotateOptions> options, IOptions<TeachServeOptions> server, CancellationToken ct)
    {
        var next = await sessions.NextAsync(sessionId, SessionRowFeature.Of(http.HttpContext), SessionsApi.BaseUrl(http, server.Value), ct);
        if (next.Value is not { } current) return next.Refusal!.Problem();
        var session = await db.Sessions.AsNoTracking().FirstAsync(s => s.Id == sessionId, ct);
        var version = await versions.GetAsync(session.ProjectId, session.ModelVersion, ct);
        var view = SessionViews.Of(session, forAnnotator: true);
        var gate = version.Settings.Gate;
        // The ending's wording comes from the project as it is now, so an owner's edit reaches running sessions.
        var project = await db.Projects.AsNoTracking().FirstAsync(p => p.Id == session.ProjectId, ct);
        var settings = ProjectOperations.Settings(project);
        var completion = settings.Completion;

        // Which check this is and how far into it, so the page can announce every check and number its items from 1.
        // Not secret: the annotator has seen both; the counts of wrong answers stay on the owner's side.
        int attempt = 1, attemptAnswered = 0, maxTeaching = gate.MaxTeachingItems;
        var refresher = session.Purpose == SessionPurposes.Refresher;
        if (current.Phase == Phases.Testing || (refresher && session.IsActive))
        {
            if (!states.TryGet(sessionId, current.Step, out var run)) (_, run) = await loader.LoadAsync(db, session, ct);
            attempt = run.RetakesUsed + 1;
            attemptAnswered = run.AttemptTestAnswered;
            // A refresher's own teaching budget, from the options it runs with.
            maxTeaching = run.Options.Gate.MaxTeachingItems;
        }

        PageItem? item = null;
        if (current.Item is { } shown)
        {
            var c = shown.Content;
            item = new PageItem(shown.Ref, c.Text, c.ImageUrl, c.Svg is { } svg ? SvgSanitizer.DataUri(svg) : null);
        }
        return TypedResults.Ok(new AnnotatorPageState
        {
            SessionId = sessionId,
            ProjectName = project.Name,
            Labels = version.Model.Labels,
            Phase = current.Phase,
            Step = current.Step,
            ItemsTaught = view.ItemsTaught,
            TestAnswered = view.TestAnswered,
            Attempt = attempt,
            AttemptAnswered = attemptAnswered,
            PredictedError = view.PredictedError,
            StartingError = version.Model.Summary.PriorExpectedError,
            TargetError = gate.TargetError,
            MaxTeachingItems = maxTeaching,
            MaxTestItems = gate.Test.MaxItems,
            Item = item,
            // The owner's end wording is written for onboarding; a refresher ends with the page's own.
            End = PageStates.End(view, refresher ? null : completion),
            HasGuidance = settings.Guidance is { IsEmpty: false },
            Purpose = session.Purpose,
            ParentOrigins = options.Value.FrameAncestors,
        });
    }
}
