using System.Security.Claims;
using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Core.Experiments;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Experiments;

/// <summary>The experiment routes; <see cref="ExperimentOperations"/> does the work.</summary>
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
        string projectId, CreateExperimentRequest body, ExperimentOperations experiments, CancellationToken ct) =>
        (await experiments.CreateAsync(projectId, body, ct)).Answer(e => TypedResults.Created($"/api/v1/experiments/{e.ExperimentId}", e));

    public static async Task<Results<Ok<ExperimentList>, ProblemHttpResult>> ListExperiments(
        string projectId, ExperimentOperations experiments, CancellationToken ct) =>
        (await experiments.ListAsync(projectId, ct)).Answer(TypedResults.Ok);

    public static async Task<Results<Ok<ExperimentView>, ProblemHttpResult>> GetExperiment(
        string experimentId, ClaimsPrincipal user, ExperimentOperations experiments, CancellationToken ct) =>
        (await experiments.GetAsync(experimentId, user, ct)).Answer(TypedResults.Ok);

    public static async Task<Results<Ok<ExperimentView>, ProblemHttpResult>> StartExperiment(
        string experimentId, ClaimsPrincipal user, ExperimentOperations experiments, CancellationToken ct) =>
        (await experiments.StartAsync(experimentId, user, ct)).Answer(TypedResults.Ok);

    public static async Task<Results<Ok<ExperimentView>, ProblemHttpResult>> StopExperiment(
        string experimentId, ClaimsPrincipal user, ExperimentOperations experiments, CancellationToken ct) =>
        (await experiments.StopAsync(experimentId, user, ct)).Answer(TypedResults.Ok);

    public static async Task<Results<JsonHttpResult<ExperimentReportResult>, ProblemHttpResult>> GetReport(
        string experimentId, ClaimsPrincipal user, ExperimentOperations experiments, CancellationToken ct) =>
        (await experiments.ReportAsync(experimentId, user, ct)).Answer(r => TypedResults.Json(r, Json.Results));

    public static async Task<Results<ContentHttpResult, ProblemHttpResult>> GetReportCsv(
        string experimentId, ClaimsPrincipal user, ExperimentOperations experiments, CancellationToken ct) =>
        (await experiments.ReportCsvAsync(experimentId, user, ct)).Answer(PlotImages.Csv);

    public static async Task<Results<FileContentHttpResult, ProblemHttpResult>> GetPlot(
        string experimentId, string file, ClaimsPrincipal user, ExperimentOperations experiments, CancellationToken ct) =>
        (await experiments.PlotAsync(experimentId, file, user, ct)).Answer(PlotImages.Render);
}
