using Microsoft.AspNetCore.Antiforgery;
using TeachServe.Plots;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Versions;

namespace TeachServe.Server.OwnerConsole;

/// <summary>The page of one annotator's session (linked from the session table) and its picture.</summary>
public static class ConsoleSessionEndpoints
{
    public static RouteGroupBuilder MapConsoleSessions(this RouteGroupBuilder console)
    {
        console.MapGet("/sessions/{sessionId}", SessionPage);
        console.MapGet("/sessions/{sessionId}/predicted-error.svg", SessionPlot);
        return console;
    }

    public static async Task<IResult> SessionPage(
        string sessionId, HttpContext http, TeachServeDb db, IAntiforgery forms, ModelVersionCache versions, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return Results.Redirect("/console");
        var token = ConsoleEndpoints.Token(http, forms);
        var detail = await ConsoleSessionDetail.ReadAsync(db, versions, project.Id, sessionId, ct);
        if (!detail.Succeeded)
        {
            var problem = detail.Problem.ProblemDetails;
            return ConsoleEndpoints.Render<ConsoleProblemPage, ConsoleProblemModel>(http,
                new ConsoleProblemModel(project.Name, token, problem.Title ?? "Not found", problem.Detail ?? "", problem.Status ?? 404),
                detail.Problem.StatusCode);
        }
        return ConsoleEndpoints.Render<AnnotatorSessionPage, SessionPageModel>(http,
            new SessionPageModel(project.Name, token, detail.Value), StatusCodes.Status200OK);
    }

    public static async Task<IResult> SessionPlot(
        string sessionId, HttpContext http, TeachServeDb db, ModelVersionCache versions, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return Results.Unauthorized();
        var detail = await ConsoleSessionDetail.ReadAsync(db, versions, project.Id, sessionId, ct);
        if (!detail.Succeeded) return detail.Problem;
        http.Response.Headers.CacheControl = "no-store";
        http.Response.Headers.ContentSecurityPolicy = "default-src 'none'; style-src 'unsafe-inline'";
        http.Response.Headers.XContentTypeOptions = "nosniff";
        return Results.Text(PlotOutput.Svg(ConsoleVersionPlots.SessionPredictedError(detail.Value), PlotSize.Console), "image/svg+xml; charset=utf-8");
    }
}

/// <summary>The per-annotator page: one session, its answers, checks and picture.</summary>
public sealed record SessionPageModel(string ProjectName, string FormToken, SessionDetail Detail);

/// <summary>A console page for a refused request (e.g. a session that is not in the project): the problem's title and detail.</summary>
public sealed record ConsoleProblemModel(string ProjectName, string FormToken, string Title, string Detail, int Status);
