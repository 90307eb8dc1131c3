using System.Security.Claims;
using System.Text.Json;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Core.Simulation;
using TeachServe.Plots;
using TeachServe.Server.Experiments;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Simulations;

/// <summary>What can be done with simulations: queue, poll, cancel, export, plot. Problems are returned, not thrown.</summary>
public sealed class SimulationOperations(
    TeachServeDb db, SimulationQueue queue, IOptions<SimulationLimits> limits, ModelVersionCache versions, TimeProvider time)
{
    public const string TooManyTitle = "Too many simulations";

    public async Task<Outcome<SimulationView>> CreateAsync(string projectId, CreateSimulationRequest body, CancellationToken ct)
    {
        var problems = SimulationRequests.Problems(body, limits.Value);
        if (problems.Count > 0) return Problems.Invalid(string.Join(" ", problems), problems);
        if (await ProjectScope.MissingProjectAsync(db, projectId, ct) is { } missing) return missing;
        var number = await ProjectScope.ReadyVersionAsync(db, projectId, body.ModelVersion, ct);
        if (number.Problem is { } notReady) return notReady;
        if (SimulationRequests.Variants(body).Any(LearnerKinds.NeedsFeatures)
            && (await versions.GetAsync(projectId, number.Value, ct)).Features is null)
        {
            const string message = "'variants' lists a learner kind that answers from item features (exemplar, prototype, oblique-rules, decision-lists, partial-attention), and this project's items have none.";
            return Problems.Invalid(message, [message]);
        }

        var pending = await db.Set<SimulationJob>().CountAsync(j => j.ProjectId == projectId
            && (j.Status == SimulationStatuses.Queued || j.Status == SimulationStatuses.Running), ct);
        if (pending >= limits.Value.MaxPendingJobsPerProject)
            return Problems.Of(StatusCodes.Status429TooManyRequests, TooManyTitle,
                $"The project already has {pending} simulations queued or running; wait or cancel one.");

        var job = new SimulationJob
        {
            Id = Ids.New("sim_"),
            ProjectId = projectId, ModelVersion = number.Value, Status = SimulationStatuses.Queued,
            RequestJson = JsonSerializer.Serialize(body with { ModelVersion = number.Value }, Json.Results), CreatedAt = time.GetUtcNow(),
            NodeId = queue.NodeId, HeartbeatAt = time.GetUtcNow(),
        };
        db.Set<SimulationJob>().Add(job);
        await db.SaveChangesAsync(ct);
        queue.Enqueue(job.Id);
        return View(job);
    }

    public async Task<Outcome<SimulationView>> GetAsync(string simulationId, ClaimsPrincipal user, CancellationToken ct) =>
        await FindAsync(user, simulationId, ct) is { } job ? View(job) : NoSuchSimulation();

    /// <summary>Stops a queued or running simulation; 409 once it has ended.</summary>
    public async Task<Outcome<SimulationView>> CancelAsync(string simulationId, ClaimsPrincipal user, CancellationToken ct)
    {
        var job = await FindAsync(user, simulationId, ct);
        if (job is null) return NoSuchSimulation();
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
        var now = await FindAsync(user, simulationId, ct);
        return View(now!);
    }

    /// <summary>One row per policy × variant; 409 while there are no results.</summary>
    public async Task<Outcome<string>> ResultsCsvAsync(string simulationId, ClaimsPrincipal user, CancellationToken ct)
    {
        var found = await FinishedAsync(user, simulationId, ct);
        return found.Problem is { } problem ? problem : SimulationOutputs.Csv(found.Value.Results);
    }

    /// <summary>The learning curves, as <c>learning-curves.svg</c> or <c>learning-curves.png</c>.</summary>
    public async Task<Outcome<PlotFile>> PlotAsync(string simulationId, string file, ClaimsPrincipal user, CancellationToken ct)
    {
        if (!PlotImages.TryParse(file, out var name, out var format) || name != "learning-curves")
            return Problems.NotFound("No such plot; expected learning-curves.svg or learning-curves.png.");
        var found = await FinishedAsync(user, simulationId, ct);
        if (found.Problem is { } problem) return problem;
        var (job, results) = found.Value;
        var version = await versions.GetAsync(job.ProjectId, job.ModelVersion, ct);
        return new PlotFile(SimulationCurves.Draw(results, version.Settings.Name, version.Settings.Gate.TargetError), format);
    }

    /// <summary>The job with its results: 404 for no such job, 409 while it has none.</summary>
    private async Task<Outcome<(SimulationJob Job, List<SimulationResult> Results)>> FinishedAsync(ClaimsPrincipal user, string simulationId, CancellationToken ct)
    {
        var job = await FindAsync(user, simulationId, ct);
        if (job is null) return NoSuchSimulation();
        if (Results(job) is not { } results) return Problems.Conflict($"The simulation has no results ({job.Status}).");
        return (job, results);
    }

    private static List<SimulationResult>? Results(SimulationJob job) =>
        job.ResultJson is null ? null : JsonSerializer.Deserialize<List<SimulationResult>>(job.ResultJson, Json.StoredResults);

    private SimulationView View(SimulationJob job)
    {
        var progress = job.Status == SimulationStatuses.Running ? queue.Progress(job.Id) ?? job.Progress : job.Progress;
        return new SimulationView(job.Id, job.ProjectId, job.ModelVersion, job.Status, 100 * progress, job.Reason,
            JsonSerializer.Deserialize<CreateSimulationRequest>(job.RequestJson, Json.Results)!, Results(job),
            job.CreatedAt, job.StartedAt, job.FinishedAt);
    }

    private static ProblemHttpResult NoSuchSimulation() => Problems.NotFound("No such simulation.");

    private Task<SimulationJob?> FindAsync(ClaimsPrincipal user, string simulationId, CancellationToken ct) =>
        ProjectScope.FindOwnedAsync(db.Set<SimulationJob>().AsNoTracking(), user, simulationId, "sim_", ct);
}
