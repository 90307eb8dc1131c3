using System.Security.Claims;
using System.Text.Json;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Core.Simulation;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Experiments;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Versions;
using TeachServe.Plots;

namespace TeachServe.Server.Simulations;

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
        string projectId, CreateSimulationRequest body, TeachServeDb db, SimulationQueue queue, IOptions<SimulationLimits> limits,
        ModelVersionCache versions, TimeProvider time, CancellationToken ct)
    {
        var problems = SimulationRequests.Problems(body, limits.Value);
        if (problems.Count > 0)
            return Problems.Unprocessable(string.Join(" ", problems), new Dictionary<string, object?> { ["errors"] = problems });
        if (!await db.Projects.AnyAsync(p => p.Id == projectId, ct)) return Problems.NotFound("No such project.");
        var number = body.ModelVersion ?? await db.ModelVersions
            .Where(v => v.ProjectId == projectId && v.Status == VersionStatuses.Ready).MaxAsync(v => (int?)v.Number, ct);
        if (number is null || !await db.ModelVersions.AnyAsync(v => v.ProjectId == projectId && v.Number == number && v.Status == VersionStatuses.Ready, ct))
            return Problems.NotFound("No such ready model version.");
        if (SimulationRequests.Variants(body).Any(LearnerKinds.NeedsFeatures)
            && (await versions.GetAsync(projectId, number.Value, ct)).Features is null)
        {
            const string message = "'variants' lists a learner kind that answers from item features (exemplar, prototype, oblique-rules, decision-lists, partial-attention), and this project's items have none.";
            return Problems.Unprocessable(message, new Dictionary<string, object?> { ["errors"] = new[] { message } });
        }

        var pending = await db.Set<SimulationJob>().CountAsync(j => j.ProjectId == projectId
            && (j.Status == SimulationStatuses.Queued || j.Status == SimulationStatuses.Running), ct);
        if (pending >= limits.Value.MaxPendingJobsPerProject)
            return TypedResults.Problem($"The project already has {pending} simulations queued or running; wait or cancel one.",
                statusCode: StatusCodes.Status429TooManyRequests, title: "Too many simulations");

        var job = new SimulationJob
        {
            Id = "sim_" + Ids.Base32(System.Security.Cryptography.RandomNumberGenerator.GetBytes(10)),
            ProjectId = projectId, ModelVersion = number.Value, Status = SimulationStatuses.Queued,
            RequestJson = JsonSerializer.Serialize(body with { ModelVersion = number }, ReportJson.Options), CreatedAt = time.GetUtcNow(),
            NodeId = queue.NodeId, HeartbeatAt = time.GetUtcNow(),
        };
        db.Set<SimulationJob>().Add(job);
        await db.SaveChangesAsync(ct);
        queue.Enqueue(job.Id);
        return TypedResults.Accepted($"/api/v1/simulations/{job.Id}", View(job, queue));
    }

    public static async Task<Results<JsonHttpResult<SimulationView>, ProblemHttpResult>> GetSimulation(
        string simulationId, ClaimsPrincipal user, TeachServeDb db, SimulationQueue queue, CancellationToken ct) =>
        await FindAsync(db, user, simulationId, ct) is { } job
            ? TypedResults.Json(View(job, queue), ReportJson.Options)
            : Problems.NotFound("No such simulation.");

    public static async Task<Results<JsonHttpResult<SimulationView>, ProblemHttpResult>> CancelSimulation(
        string simulationId, ClaimsPrincipal user, TeachServeDb db, SimulationQueue queue, TimeProvider time, CancellationToken ct)
    {
        var job = await FindAsync(db, user, simulationId, ct);
        if (job is null) return Problems.NotFound("No such simulation.");
        if (SimulationStatuses.IsFinal(job.Status))
            return Problems.Conflict($"The simulation has already ended ({job.Status}).");
        if (!queue.Cancel(job.Id))
        {
            // Not held by this node's queue: end it in the database; the node holding it (if any) sees the cancel at
            // its next heartbeat and stops computing.
            await db.Set<SimulationJob>().Where(j => j.Id == job.Id && (j.Status == SimulationStatuses.Queued || j.Status == SimulationStatuses.Running))
                .ExecuteUpdateAsync(u => u.SetProperty(j => j.Status, SimulationStatuses.Canceled)
                    .SetProperty(j => j.Reason, "Canceled by the owner.").SetProperty(j => j.FinishedAt, time.GetUtcNow()), ct);
        }
        var now = await FindAsync(db, user, simulationId, ct);
        return TypedResults.Json(View(now!, queue), ReportJson.Options);
    }

    public static async Task<Results<ContentHttpResult, ProblemHttpResult>> GetCsv(
        string simulationId, ClaimsPrincipal user, TeachServeDb db, CancellationToken ct)
    {
        var job = await FindAsync(db, user, simulationId, ct);
        if (job is null) return Problems.NotFound("No such simulation.");
        if (Results(job) is not { } results) return Problems.Conflict($"The simulation has no results ({job.Status}).");
        return TypedResults.Text(SimulationOutputs.Csv(results), "text/csv; charset=utf-8");
    }

    public static async Task<Results<FileContentHttpResult, ProblemHttpResult>> GetPlot(
        string simulationId, string file, ClaimsPrincipal user, TeachServeDb db, ModelVersionCache versions, CancellationToken ct)
    {
        if (!PlotImages.TryParse(file, out var name, out var format) || name != "learning-curves")
            return Problems.NotFound("No such plot; expected learning-curves.svg or learning-curves.png.");
        var job = await FindAsync(db, user, simulationId, ct);
        if (job is null) return Problems.NotFound("No such simulation.");
        if (Results(job) is not { } results) return Problems.Conflict($"The simulation has no results ({job.Status}).");
        var version = await versions.GetAsync(job.ProjectId, job.ModelVersion, ct);
        return PlotImages.Render(SimulationCurves.Draw(results, version.Settings.Name, version.Settings.Gate.TargetError), format);
    }

    private static List<SimulationResult>? Results(SimulationJob job) =>
        job.ResultJson is null ? null : JsonSerializer.Deserialize<List<SimulationResult>>(job.ResultJson, ReadOptions);

    private static readonly JsonSerializerOptions ReadOptions =
        new(ReportJson.Options) { UnmappedMemberHandling = System.Text.Json.Serialization.JsonUnmappedMemberHandling.Skip };

    private static SimulationView View(SimulationJob job, SimulationQueue queue)
    {
        var progress = job.Status == SimulationStatuses.Running ? queue.Progress(job.Id) ?? job.Progress : job.Progress;
        return new SimulationView(job.Id, job.ProjectId, job.ModelVersion, job.Status, 100 * progress, job.Reason,
            JsonSerializer.Deserialize<CreateSimulationRequest>(job.RequestJson, ReportJson.Options)!, Results(job),
            job.CreatedAt, job.StartedAt, job.FinishedAt);
    }

    private static async Task<SimulationJob?> FindAsync(TeachServeDb db, ClaimsPrincipal user, string simulationId, CancellationToken ct)
    {
        if (!Ids.LooksLike(simulationId, "sim_")) return null;
        var job = await db.Set<SimulationJob>().AsNoTracking().FirstOrDefaultAsync(j => j.Id == simulationId, ct);
        if (job is null) return null;
        return user.Role() == KeyRole.Admin || job.ProjectId == user.ProjectId() ? job : null;
    }
}
