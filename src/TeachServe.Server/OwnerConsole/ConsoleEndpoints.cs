using System.Globalization;
using System.Text;
using Microsoft.AspNetCore.Antiforgery;
using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Plots;
using TeachServe.Server.Events;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Items;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Sessions;
using TeachServe.Server.Versions;

namespace TeachServe.Server.OwnerConsole;

/// <summary>
/// The owner console's routes, signed in with the owner key: each reads its form, calls the same operations as the
/// API (upload, compile, settings patch, keys, event export) and renders a page component with the outcome.
/// </summary>
public static class ConsoleEndpoints
{
    private const string SessionEnded = "Your console session has ended; sign in again.";

    public static IServiceCollection AddOwnerConsole(this IServiceCollection services)
    {
        services.AddRazorComponents();
        return services.AddConsoleAuth();
    }

    public static RouteGroupBuilder MapOwnerConsole(this IEndpointRouteBuilder app)
    {
        var console = app.MapGroup(ConsoleAuth.Path).ExcludeFromDescription();
        console.MapGet("/", Onboarding);
        console.MapPost("/sign-in", SignIn).RequireRateLimiting(RateLimiting.CredentialPolicy);
        console.MapPost("/sign-out", SignOut);
        console.MapGet("/project", Project);
        console.MapPost("/items", Upload);
        console.MapPost("/versions", Compile);
        console.MapPost("/settings", SaveSettings);
        console.MapPost("/keys", ChangeKey);
        console.MapGet("/events.jsonl", ExportEvents);
        console.MapGet("/sessions.csv", ExportSessions);
        console.MapGet("/plots/{name}", Plot);
        console.MapConsoleSessions();
        console.MapLiveConsole();
        return console;
    }

    // ---------- sign-in ----------

    private static RazorComponentResult<SignInPage> SignInPage(HttpContext http, IAntiforgery forms, int status, string? error = null, string? notice = null) =>
        Render<SignInPage, SignInModel>(http, new SignInModel(Token(http, forms), error, notice), status);

    public static async Task<IResult> SignIn(HttpContext http, IFormCollection form, TeachServeDb db, IAntiforgery forms, CancellationToken ct)
    {
        var project = await ConsoleAuth.CheckOwnerKeyAsync(db, form["ownerKey"], ct);
        if (project is null)
            return SignInPage(http, forms, StatusCodes.Status401Unauthorized,
                error: "That key was not accepted. Use the owner key of your project (tso.…), not the admin, embed or session key.");
        await ConsoleAuth.SignInAsync(http, project);
        return Results.Redirect("/console", permanent: false, preserveMethod: false);
    }

    public static async Task<IResult> SignOut(HttpContext http, IFormCollection form)
    {
        await ConsoleAuth.SignOutAsync(http);
        return Results.Redirect("/console");
    }

    // ---------- onboarding ----------

    public static async Task<IResult> Onboarding(HttpContext http, TeachServeDb db, IAntiforgery forms, TimeProvider time, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return SignInPage(http, forms, StatusCodes.Status200OK);
        // ?page=N pages the session table (a missing or unreadable number is the first page, one too high the last).
        var page = int.TryParse(http.Request.Query["page"], NumberStyles.Integer, CultureInfo.InvariantCulture, out var p) ? p : 1;
        var filter = await VersionFilter.ReadAsync(http, db, project.Id, ct);
        var stats = await ConsoleStats.ComputeAsync(db, project.Id, ct, page, ProjectOperations.Settings(project).Cost, filter.Selected);
        var model = new OnboardingModel(project.Name, Token(http, forms), time.GetUtcNow(), stats,
            ProjectOperations.Settings(project).Gate.TargetError, filter);
        return Render<OnboardingPage, OnboardingModel>(http, model, StatusCodes.Status200OK);
    }

    public static async Task<IResult> Plot(string name, HttpContext http, TeachServeDb db, VersionOperations versions, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return Results.Unauthorized();
        if (!ConsolePlots.Names.Contains(name)) return Problems.NotFound($"No such plot; expected one of {string.Join(", ", ConsolePlots.Names)}.");
        var filter = await VersionFilter.ReadAsync(http, db, project.Id, ct);
        var stats = await ConsoleStats.ComputeAsync(db, project.Id, ct, version: filter.Selected);
        var targets = filter.Targets(stats.VersionsInPictures ?? [], ProjectOperations.Settings(project).Gate.TargetError);
        var starting = filter.Selected is { } selected
            ? filter.Choices.First(c => c.Number == selected).StartingError
            : await versions.StartingErrorAsync(project.Id, ct);
        var plot = name switch
        {
            "calibration.svg" => ConsoleVersionPlots.Calibration(stats.Calibration, targets),
            "learning-curve.svg" => ConsoleVersionPlots.LearningCurve(stats.LearningCurve,
                starting ?? (stats.LearningCurve.Count > 0 ? stats.LearningCurve[0].MeanPredictedError : 1),
                targets),
            _ => ConsolePlots.ItemsToRelease(stats.ItemsToRelease),
        };
        http.Response.Headers.CacheControl = "no-store";
        http.Response.Headers.ContentSecurityPolicy = "default-src 'none'; style-src 'unsafe-inline'";
        http.Response.Headers.XContentTypeOptions = "nosniff";
        return Results.Text(PlotOutput.Svg(plot, PlotSize.Console), "image/svg+xml; charset=utf-8");
    }

    // ---------- project, items, versions, settings, keys ----------

    public static async Task<IResult> Project(
        HttpContext http, TeachServeDb db, IAntiforgery forms, ItemOperations items, VersionOperations versions, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return Results.Redirect("/console");
        return await ProjectPageAsync(http, forms, items, versions, project, StatusCodes.Status200OK, ct);
    }

    /// <summary>The project page with the outcome of a form: a message on top, or problems beside the form that caused them.</summary>
    private static async Task<IResult> ProjectPageAsync(
        HttpContext http, IAntiforgery forms, ItemOperations items, VersionOperations versions, Project project, int status,
        CancellationToken ct, string? message = null, FormProblems? problems = null, IFormCollection? typed = null)
    {
        var model = new ProjectModel(
            project.Name, Token(http, forms), ProjectOperations.Settings(project),
            await items.CountsByLabelAsync(project.Id, ct), await versions.LatestAsync(project.Id, 20, ct),
            message, MessageIsError: status >= 400, problems, typed);
        return Render<ProjectPage, ProjectModel>(http, model, status);
    }

    /// <summary>A refused operation's problem beside its form: its detail as the heading, its errors (field, reason, line) below.</summary>
    private static FormProblems Refused(string form, ProblemHttpResult problem, string? prefix = null)
    {
        var heading = problem.ProblemDetails.Detail ?? "Not done.";
        var errors = problem.ProblemDetails.Extensions.TryGetValue("errors", out var e) && e is IEnumerable<FieldProblem> list ? list.ToList() : [];
        return new FormProblems(form, prefix is null ? heading : $"{prefix}: {heading}", errors);
    }

    public static async Task<IResult> Upload(
        HttpContext http, IFormCollection form, TeachServeDb db, IAntiforgery forms, ItemOperations items, VersionOperations versions, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return SignInPage(http, forms, StatusCodes.Status401Unauthorized, error: SessionEnded);
        Task<IResult> Refuse(string heading, string reason) => ProjectPageAsync(http, forms, items, versions, project,
            StatusCodes.Status422UnprocessableEntity, ct, problems: new FormProblems("items", heading, [new FieldProblem("file", reason)]));

        var file = form.Files["file"];
        if (file is null || file.Length == 0) return await Refuse("Choose a file first.", "no file was sent");
        if (ItemUploadFormats.FromFileName(file.FileName) is not { } format)
            return await Refuse("This file type is not read.", $"'{file.FileName}' should end in .jsonl, .json or .csv");
        string text;
        try
        {
            await using var stream = file.OpenReadStream();
            using var reader = new StreamReader(stream, new UTF8Encoding(false, throwOnInvalidBytes: true));
            text = await reader.ReadToEndAsync(ct);
        }
        catch (DecoderFallbackException)
        {
            return await Refuse("The file is not UTF-8 text.", "save it as UTF-8 and upload again");
        }

        var uploaded = await items.UploadAsync(project.Id, format, text, ct);
        if (!uploaded.Succeeded)
            return await ProjectPageAsync(http, forms, items, versions, project, uploaded.Problem.StatusCode, ct,
                problems: Refused("items", uploaded.Problem, prefix: file.FileName));
        var r = uploaded.Value;
        return await ProjectPageAsync(http, forms, items, versions, project, StatusCodes.Status200OK, ct,
            message: $"{file.FileName}: {r.Received} items read, {r.Created} new, {r.Updated} changed, {r.Unchanged} unchanged. Compile a new model version to teach with them.");
    }

    public static async Task<IResult> Compile(
        HttpContext http, IFormCollection form, TeachServeDb db, IAntiforgery forms, ItemOperations items, VersionOperations versions, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return SignInPage(http, forms, StatusCodes.Status401Unauthorized, error: SessionEnded);
        var outcome = await versions.CompileAsync(project.Id, ct);
        var message = outcome switch
        {
            { State: CompileState.Compiled, Version: { } v } => $"Model version {v.Version} is ready; new sessions use it.",
            { State: CompileState.Compiling, Version: { } v } => $"Model version {v.Version} is compiling in the background; reload this page to see it ready.",
            { State: CompileState.Existing, Version: { } v } => $"Model version {v.Version} already holds these settings and items; nothing new was compiled.",
            _ => null,
        };
        return message is not null
            ? await ProjectPageAsync(http, forms, items, versions, project, StatusCodes.Status200OK, ct, message: message)
            : await ProjectPageAsync(http, forms, items, versions, project, outcome.Problem!.StatusCode, ct, problems: Refused("versions", outcome.Problem));
    }

    public static async Task<IResult> SaveSettings(
        HttpContext http, IFormCollection form, TeachServeDb db, IAntiforgery forms, ProjectOperations projects, ItemOperations items,
        VersionOperations versions, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return SignInPage(http, forms, StatusCodes.Status401Unauthorized, error: SessionEnded);

        var (patch, problems) = SettingsForm.ToPatch(form);
        if (problems.Count > 0)
            return await ProjectPageAsync(http, forms, items, versions, project, StatusCodes.Status422UnprocessableEntity, ct,
                problems: new FormProblems("settings", "The settings were not saved.", problems), typed: form);
        var patched = await projects.PatchAsync(project.Id, patch, ct);
        if (!patched.Succeeded)
        {
            // Problems that name their fields need no more words above them; one without fields is its own explanation.
            var refused = Refused("settings", patched.Problem);
            refused = refused with { Heading = refused.List.Count > 0 ? "The settings were not saved." : $"The settings were not saved: {refused.Heading}" };
            return await ProjectPageAsync(http, forms, items, versions, project, patched.Problem.StatusCode, ct, problems: refused, typed: form);
        }
        var saved = await projects.FindAsync(project.Id, ct) ?? project;
        return await ProjectPageAsync(http, forms, items, versions, saved, StatusCodes.Status200OK, ct,
            message: "Settings saved. Compile a new model version to use the new gate.");
    }

    public static async Task<IResult> ChangeKey(
        HttpContext http, IFormCollection form, TeachServeDb db, IAntiforgery forms, ProjectOperations projects, ItemOperations items,
        VersionOperations versions, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return SignInPage(http, forms, StatusCodes.Status401Unauthorized, error: SessionEnded);
        var kind = form["kind"].ToString();
        var action = form["action"].ToString();
        if (kind is not (ProjectKeysApi.OwnerKind or ProjectKeysApi.EmbedKind) || action is not ("rotate" or "revoke")
            || (kind == ProjectKeysApi.OwnerKind && action == "revoke"))
        {
            return await ProjectPageAsync(http, forms, items, versions, project, StatusCodes.Status400BadRequest, ct,
                problems: new FormProblems("keys", "Not changed.", [new FieldProblem("kind", "choose the embed key (replace or revoke) or the owner key (replace)")]));
        }

        if (action == "revoke")
        {
            await projects.RevokeKeyAsync(project.Id, kind, "console", ct);
            return await ProjectPageAsync(http, forms, items, versions, project, StatusCodes.Status200OK, ct,
                message: "The embed key is revoked: your platform cannot start sessions until you replace it.");
        }
        var rotated = (await projects.RotateKeyAsync(project.Id, kind, "console", ct))!;
        if (kind == ProjectKeysApi.EmbedKind)
        {
            return await ProjectPageAsync(http, forms, items, versions, project, StatusCodes.Status200OK, ct,
                message: $"New embed key (shown once; give it to your platform's backend): {rotated.Key}");
        }
        // The console cookie names the old owner key's fingerprint, so this console session has ended too.
        return SignInPage(http, forms, StatusCodes.Status200OK,
            notice: $"New owner key (shown once; keep it safe, the server stores only its hash): {rotated.Key}");
    }

    // ---------- exports ----------

    public static async Task<IResult> ExportEvents(HttpContext http, TeachServeDb db, EventOperations events, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return Results.Redirect("/console");
        var log = await events.OpenAsync(project.Id, after: null, ct);
        if (!log.Succeeded) return log.Problem;
        http.Response.Headers.ContentDisposition = $"attachment; filename=\"{project.Id}-events.jsonl\"";
        return TypedResults.Stream(body => events.WriteJsonLinesAsync(log.Value, body, ct), EventOperations.MediaType);
    }

    public static async Task<IResult> ExportSessions(HttpContext http, TeachServeDb db, CancellationToken ct)
    {
        var project = await ConsoleAuth.CurrentAsync(http, db, ct);
        if (project is null) return Results.Redirect("/console");
        http.Response.Headers.ContentDisposition = $"attachment; filename=\"{project.Id}-sessions.csv\"";
        return Results.Text(await SessionsCsv.WriteAsync(db, project.Id, ct), "text/csv; charset=utf-8");
    }

    // ---------- rendering ----------

    internal static string Token(HttpContext http, IAntiforgery forms) => forms.GetAndStoreTokens(http).RequestToken!;

    /// <summary>A page component with the pages' security headers (no script at all, no framing).</summary>
    internal static RazorComponentResult<TPage> Render<TPage, TModel>(HttpContext http, TModel model, int status)
        where TPage : ConsolePage<TModel>
    {
        PageHeaders.Apply(http.Response, "'none'", externalImages: false);
        return new RazorComponentResult<TPage>(new Dictionary<string, object?> { [nameof(ConsolePage<TModel>.Model)] = model })
        {
            StatusCode = status,
        };
    }
}
