using System.Security.Claims;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Experiments;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Experiments;

public static class ExperimentsApi
{
    public static RouteGroupBuilder MapExperiments(this IEndpointRouteBuilder api)
    {
        var project = api.MapGroup("/projects/{projectId}/experiments").WithTags("Experiments");
        project.MapPost("/", CreateExperiment).RequireKey(KeyRole.Owner).WithName("createExperiment")
            .Problem(StatusCodes.Status422UnprocessableEntity, "The experiment is not valid; errors names the fields.")
            .WithSummary("Define an experiment (2 to 10 arms); it starts as a draft.");
        project.MapGet("/", ListExperiments).RequireKey(KeyRole.Owner).WithName("listExperiments")
            .WithSummary("The project's experiments, oldest first.");

        var experiment = api.MapGroup("/experiments/{experimentId}").WithTags("Experiments");
        experiment.MapGet("/", GetExperiment).RequireKey(KeyRole.Owner).WithName("getExperiment")
            .Problem(StatusCodes.Status404NotFound, "No such experiment.").WithSummary("One experiment's definition and status.");
        experiment.MapPost("/start", StartExperiment).RequireKey(KeyRole.Owner).WithName("startExperiment")
            .Problem(StatusCodes.Status404NotFound, "No such experiment.")
            .Problem(StatusCodes.Status409Conflict, "The experiment was stopped, or another one runs in the project.")
            .WithSummary("Start assigning new sessions to arms; only one experiment per project runs at a time.");
        experiment.MapPost("/stop", StopExperiment).RequireKey(KeyRole.Owner).WithName("stopExperiment")
            .Problem(StatusCodes.Status404NotFound, "No such experiment.")
            .Problem(StatusCodes.Status409Conflict, "The experiment has not been started.")
            .WithSummary("Stop assigning; sessions already assigned keep their arm and still count in the report.");
        experiment.MapGet("/report", GetReport).RequireKey(KeyRole.Owner).WithName("getExperimentReport")
            .Produces<ExperimentReportResult>()
            .Problem(StatusCodes.Status404NotFound, "No such experiment.")
            .Problem(StatusCodes.Status422UnprocessableEntity, "The experiment was stored before the current rules and cannot be reported; errors names the fields.")
            .WithSummary("Per-arm numbers and comparisons with the control arm; valid to read at any time (always-valid p-values).");
        experiment.MapGet("/report.csv", GetReportCsv).RequireKey(KeyRole.Owner).WithName("getExperimentReportCsv")
            .Produces(StatusCodes.Status200OK, contentType: "text/csv")
            .Problem(StatusCodes.Status404NotFound, "No such experiment.").WithSummary("One row per annotator.");
        experiment.MapGet("/plots/{file}", GetPlot).RequireKey(KeyRole.Owner).WithName("getExperimentPlot")
            .Produces(StatusCodes.Status200OK, responseType: null, PlotImages.SvgMediaType, PlotImages.PngMediaType)
            .Problem(StatusCodes.Status404NotFound, "No such experiment, or no such plot name.")
            .Problem(StatusCodes.Status422UnprocessableEntity, "The experiment was stored before the current rules and cannot be reported; errors names the fields.")
            .WithSummary("learning-curves.svg|png or test-error.svg|png.");
        return experiment;
    }

    public static async Task<Results<Created<ExperimentView>, ProblemHttpResult>> CreateExperiment(
        string projectId, CreateExperimentRequest body, TeachServeDb db, TimeProvider time, CancellationToken ct)
    {
        var project = await db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return Problems.NotFound("No such project.");
        if (body.Name is { Length: > ExperimentLimits.NameLength })
            return Problems.Unprocessable($"'name' must be at most {ExperimentLimits.NameLength} characters.");
        var definition = new ExperimentDefinition
        {
            Name = body.Name,
            Arms = body.Arms,
            Weights = body.Weights,
            PrimaryMetric = body.PrimaryMetric,
            MinimumDetectableEffect = body.MinimumDetectableEffect,
            ControlArm = body.ControlArm,
            Salt = Ids.Base32(System.Security.Cryptography.RandomNumberGenerator.GetBytes(10)),
        };
        var problems = ExperimentValidator.Validate(definition, ProjectOperations.Settings(project).Gate, ProjectOperations.Settings(project).Labels.Count, ProjectOperations.Settings(project).Learner.Lapse);
        if (problems.Count > 0)
            return Problems.Unprocessable("The experiment is not valid.", new Dictionary<string, object?>
            {
                ["errors"] = problems.Select(p => new { field = p.Field, message = p.Message }).ToList(),
            });

        var experiment = new Experiment
        {
            Id = "exp_" + Ids.Base32(System.Security.Cryptography.RandomNumberGenerator.GetBytes(10)),
            ProjectId = projectId,
            Name = definition.Name,
            DefinitionJson = Json.Serialize(definition),
            Status = ExperimentStatuses.Draft,
            CreatedAt = time.GetUtcNow(),
        };
        db.Set<Experiment>().Add(experiment);
        await db.SaveChangesAsync(ct);
        return TypedResults.Created($"/api/v1/experiments/{experiment.Id}", View(experiment));
    }

    public static async Task<Results<Ok<ExperimentList>, ProblemHttpResult>> ListExperiments(
        string projectId, TeachServeDb db, CancellationToken ct)
    {
        if (!await db.Projects.AnyAsync(p => p.Id == projectId, ct)) return Problems.NotFound("No such project.");
        var rows = await db.Set<Experiment>().AsNoTracking().Where(e => e.ProjectId == projectId)
            .OrderBy(e => e.CreatedAt).ThenBy(e => e.Id).ToListAsync(ct);
        return TypedResults.Ok(new ExperimentList(rows.Select(View).ToList()));
    }

    public static async Task<Results<Ok<ExperimentView>, ProblemHttpResult>> GetExperiment(
        string experimentId, ClaimsPrincipal user, TeachServeDb db, CancellationToken ct) =>
        await FindAsync(db, user, experimentId, tracked: false, ct) is { } e
            ? TypedResults.Ok(View(e))
            : Problems.NotFound("No such experiment.");

    public static async Task<Results<Ok<ExperimentView>, ProblemHttpResult>> StartExperiment(
        string experimentId, ClaimsPrincipal user, TeachServeDb db, TimeProvider time, CancellationToken ct)
    {
        var experiment = await FindAsync(db, user, experimentId, tracked: true, ct);
        if (experiment is null) return Problems.NotFound("No such experiment.");
        if (experiment.Status == ExperimentStatuses.Running) return TypedResults.Ok(View(experiment));
        if (experiment.Status == ExperimentStatuses.Stopped)
            return Problems.Conflict("A stopped experiment cannot be restarted (its arms would mix two periods); create a new one.");
        var other = await db.Set<Experiment>().AsNoTracking()
            .Where(e => e.ProjectId == experiment.ProjectId && e.Status == ExperimentStatuses.Running)
            .Select(e => e.Id).FirstOrDefaultAsync(ct);
        if (other is not null)
            return Problems.Conflict($"Experiment {other} is already running in this project; stop it first.",
                new Dictionary<string, object?> { ["runningExperimentId"] = other });
        experiment.Status = ExperimentStatuses.Running;
        experiment.StartedAt = time.GetUtcNow();
        try
        {
            await db.SaveChangesAsync(ct);
        }
        catch (DbUpdateException)
        {
            // A concurrent start of another experiment won (unique running index).
            return Problems.Conflict("Another experiment was started in this project at the same time; stop it first.");
        }
        return TypedResults.Ok(View(experiment));
    }

    public static async Task<Results<Ok<ExperimentView>, ProblemHttpResult>> StopExperiment(
        string experimentId, ClaimsPrincipal user, TeachServeDb db, TimeProvider time, CancellationToken ct)
    {
        var experiment = await FindAsync(db, user, experimentId, tracked: true, ct);
        if (experiment is null) return Problems.NotFound("No such experiment.");
        if (experiment.Status == ExperimentStatuses.Draft)
            return Problems.Conflict("The experiment has not been started.");
        if (experiment.Status == ExperimentStatuses.Running)
        {
            experiment.Status = ExperimentStatuses.Stopped;
            experiment.StoppedAt = time.GetUtcNow();
            await db.SaveChangesAsync(ct);
        }
        return TypedResults.Ok(View(experiment));
    }

    public static async Task<Results<JsonHttpResult<ExperimentReportResult>, ProblemHttpResult>> GetReport(
        string experimentId, ClaimsPrincipal user, TeachServeDb db, CancellationToken ct)
    {
        var experiment = await FindAsync(db, user, experimentId, tracked: false, ct);
        if (experiment is null) return Problems.NotFound("No such experiment.");
        var definition = ExperimentArms.Definition(experiment);
        if (StoredBeforeTheRules(definition) is { } invalid) return invalid;
        var outcomes = await ExperimentOutcomes.LoadAsync(db, experiment, ct);
        return TypedResults.Json(ExperimentReport.Compute(definition, outcomes, await OptionsAsync(db, experiment, ct)), ReportJson.Options);
    }

    public static async Task<Results<ContentHttpResult, ProblemHttpResult>> GetReportCsv(
        string experimentId, ClaimsPrincipal user, TeachServeDb db, CancellationToken ct)
    {
        var experiment = await FindAsync(db, user, experimentId, tracked: false, ct);
        if (experiment is null) return Problems.NotFound("No such experiment.");
        var outcomes = await ExperimentOutcomes.LoadAsync(db, experiment, ct);
        return TypedResults.Text(ExperimentReportCsv.ToCsv(ExperimentArms.Definition(experiment), outcomes), "text/csv; charset=utf-8");
    }

    public static async Task<Results<FileContentHttpResult, ProblemHttpResult>> GetPlot(
        string experimentId, string file, ClaimsPrincipal user, TeachServeDb db, CancellationToken ct)
    {
        if (!PlotImages.TryParse(file, out var name, out var format) || !ExperimentPlots.Names.Contains(name))
            return Problems.NotFound($"No such plot; expected one of {string.Join(", ", ExperimentPlots.Names.SelectMany(n => new[] { n + ".svg", n + ".png" }))}.");
        var experiment = await FindAsync(db, user, experimentId, tracked: false, ct);
        if (experiment is null) return Problems.NotFound("No such experiment.");
        var definition = ExperimentArms.Definition(experiment);
        if (StoredBeforeTheRules(definition) is { } invalid) return invalid;
        var report = ExperimentReport.Compute(definition, await ExperimentOutcomes.LoadAsync(db, experiment, ct), await OptionsAsync(db, experiment, ct));
        return PlotImages.Render(ExperimentPlots.Draw(name, report, definition), format);
    }

    /// <summary>
    /// An experiment stored before the validator's current ranges (e.g. a minimum detectable effect of 1e-300, or
    /// weights summing to infinity) has no meaningful plan or comparison: its report and plots answer 422 naming the
    /// fields, while the CSV export, which needs neither, still works.
    /// </summary>
    private static ProblemHttpResult? StoredBeforeTheRules(ExperimentDefinition definition)
    {
        var problems = ExperimentValidator.Validate(definition);
        if (problems.Count == 0) return null;
        return Problems.Unprocessable(
            "The experiment was stored before the current rules and cannot be reported; its CSV export still works. Create a new experiment with valid settings.",
            new Dictionary<string, object?> { ["errors"] = problems.Select(p => new { field = p.Field, message = p.Message }).ToList() });
    }

    /// <summary>The experiment if it belongs to the key's project (any project for the admin key); else null, so another project's key sees 404.</summary>
    /// <summary>Report options from the experiment's project: its cost settings price the arms' items.</summary>
    private static async Task<ExperimentReportOptions> OptionsAsync(TeachServeDb db, Experiment experiment, CancellationToken ct)
    {
        var project = await db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == experiment.ProjectId, ct);
        return project is null ? new ExperimentReportOptions() : new ExperimentReportOptions { Cost = ProjectOperations.Settings(project).Cost };
    }

    private static async Task<Experiment?> FindAsync(TeachServeDb db, ClaimsPrincipal user, string experimentId, bool tracked, CancellationToken ct)
    {
        if (!Ids.LooksLike(experimentId, "exp_")) return null;
        var query = tracked ? db.Set<Experiment>() : db.Set<Experiment>().AsNoTracking();
        var experiment = await query.FirstOrDefaultAsync(e => e.Id == experimentId, ct);
        if (experiment is null) return null;
        return user.Role() == KeyRole.Admin || experiment.ProjectId == user.ProjectId() ? experiment : null;
    }

    private static ExperimentView View(Experiment e)
    {
        var d = ExperimentArms.Definition(e);
        var control = d.ControlArmIndex();
        return new ExperimentView(e.Id, e.ProjectId, e.Name, e.Status, d.Arms, d.AllocationWeights(), d.PrimaryMetric,
            d.MinimumDetectableEffect, d.Arms[control < 0 ? 0 : control].Name, e.CreatedAt, e.StartedAt, e.StoppedAt);
    }
}
