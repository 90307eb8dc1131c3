using System.Security.Claims;
using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Experiments;

namespace TeachServe.Server.Simulations;

/// <summary>The simulation routes; <see cref="SimulationOperations"/> does the work.</summary>
public static class SimulationsApi
{
    public static RouteGroupBuilder MapSimulations(this IEndpointRouteBuilder api)
    {
        var project = api.MapGroup("/projects/{projectId}/simulations").WithTags("Simulations");
        project.MapPost("/", CreateSimulation).RequireKey(KeyRole.Owner).WithName("createSimulation")
            .Problem(StatusCodes.Status422UnprocessableEntity, "The request is not valid (errors lists why), or asks for learners that need item features the project lacks.")
            .Problem(StatusCodes.Status429TooManyRequests, "The project has as many simulations queued or running as it may, or the rate limit is used up.")
            .WithSummary("Queue a comparison of policies (and learner variants) with simulated learners; poll it for progress.");

        var job = api.MapGroup("/simulations/{simulationId}").WithTags("Simulations");
        job.MapGet("/", GetSimulation).RequireKey(KeyRole.Owner).WithName("getSimulation")
            .Produces<SimulationView>().Problem(StatusCodes.Status404NotFound, "No such simulation.").WithSummary("Status, percent done, and when finished the results.");
        job.MapPost("/cancel", CancelSimulation).RequireKey(KeyRole.Owner).WithName("cancelSimulation")
            .Produces<SimulationView>().Problem(StatusCodes.Status404NotFound, "No such simulation.")
            .Problem(StatusCodes.Status409Conflict, "The simulation has already ended.").WithSummary("Stop a queued or running simulation.");
        job.MapDelete("/", CancelSimulation).RequireKey(KeyRole.Owner).WithName("deleteSimulation")
            .Produces<SimulationView>().Problem(StatusCodes.Status404NotFound, "No such simulation.")
            .Problem(StatusCodes.Status409Conflict, "The simulation has already ended.").WithSummary("Same as POST .../cancel.");
        job.MapGet("/results.csv", GetCsv).RequireKey(KeyRole.Owner).WithName("getSimulationResultsCsv")
            .Produces(StatusCodes.Status200OK, contentType: "text/csv")
            .Problem(StatusCodes.Status404NotFound, "No such simulation.")
            .Problem(StatusCodes.Status409Conflict, "The simulation has no results (queued, running, failed or canceled).").WithSummary("One row per policy × variant.");
        job.MapGet("/plots/{file}", GetPlot).RequireKey(KeyRole.Owner).WithName("getSimulationPlot")
            .Produces(StatusCodes.Status200OK, responseType: null, PlotImages.SvgMediaType, PlotImages.PngMediaType)
            .Problem(StatusCodes.Status404NotFound, "No such simulation, or no such plot name.")
            .Problem(StatusCodes.Status409Conflict, "The simulation has no results (queued, running, failed or canceled).").WithSummary("learning-curves.svg or learning-curves.png.");
        return job;
    }

    public static async Task<Results<Accepted<SimulationView>, ProblemHttpResult>> CreateSimulation(
        string projectId, CreateSimulationRequest body, SimulationOperations simulations, CancellationToken ct) =>
        (await simulations.CreateAsync(projectId, body, ct)).Answer(job => TypedResults.Accepted($"/api/v1/simulations/{job.SimulationId}", job));

    public static async Task<Results<JsonHttpResult<SimulationView>, ProblemHttpResult>> GetSimulation(
        string simulationId, ClaimsPrincipal user, SimulationOperations simulations, CancellationToken ct) =>
        (await simulations.GetAsync(simulationId, user, ct)).Answer(Json);

    public static async Task<Results<JsonHttpResult<SimulationView>, ProblemHttpResult>> CancelSimulation(
        string simulationId, ClaimsPrincipal user, SimulationOperations simulations, CancellationToken ct) =>
        (await simulations.CancelAsync(simulationId, user, ct)).Answer(Json);

    public static async Task<Results<ContentHttpResult, ProblemHttpResult>> GetCsv(
        string simulationId, ClaimsPrincipal user, SimulationOperations simulations, CancellationToken ct) =>
        (await simulations.ResultsCsvAsync(simulationId, user, ct)).Answer(PlotImages.Csv);

    public static async Task<Results<FileContentHttpResult, ProblemHttpResult>> GetPlot(
        string simulationId, string file, ClaimsPrincipal user, SimulationOperations simulations, CancellationToken ct) =>
        (await simulations.PlotAsync(simulationId, file, user, ct)).Answer(PlotImages.Render);

    /// <summary>A simulation's view carries its results, which are written in the research-results dialect.</summary>
    private static JsonHttpResult<SimulationView> Json(SimulationView view) => TypedResults.Json(view, Infrastructure.Json.Results);
}
