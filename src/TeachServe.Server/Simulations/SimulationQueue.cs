using System.Collections.Concurrent;
using System.Text.Json;
using System.Threading.Channels;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Core.Simulation;
using TeachServe.Core.Teaching;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Simulations;

/// <summary>
/// Runs submitted simulations in the background, <see cref="SimulationLimits.MaxConcurrentJobs"/> at a time. Progress
/// is kept in memory while a job runs (and written to its row after each policy × variant), cancellation is by a
/// per-job token, and a job past <see cref="SimulationLimits.MaxRunTime"/> (on the injected clock) ends failed.
/// </summary>
[System.Diagnostics.CodeAnalysis.SuppressMessage("Naming", "CA1711", Justification = "A queue of background jobs, which is what the name says; not a collection type.")]
public sealed partial class SimulationQueue(
    IServiceScopeFactory scopes, ModelVersionCache versions, IOptions<SimulationLimits> limits, TimeProvider time,
    ILogger<SimulationQueue> logger) : BackgroundService
{
    private readonly Channel<string> _queue = Channel.CreateUnbounded<string>();
    private readonly ConcurrentDictionary<string, CancellationTokenSource> _cancels = new();
    private readonly ConcurrentDictionary<string, double> _progress = new();

    /// <summary>This process's name on the jobs it holds.</summary>
    public string NodeId { get; } = "node_" + Infrastructure.Ids.Base32(System.Security.Cryptography.RandomNumberGenerator.GetBytes(10));

    public void Enqueue(string jobId)
    {
        _cancels[jobId] = new CancellationTokenSource();
        _queue.Writer.TryWrite(jobId);
    }

    /// <summary>Live progress of a running job, if this node runs it.</summary>
    public double? Progress(string jobId) => _progress.TryGetValue(jobId, out var p) ? p : null;

    /// <summary>Asks a queued or running job to stop; false when this node does not hold it.</summary>
    public bool Cancel(string jobId)
    {
        if (!_cancels.TryGetValue(jobId, out var cts)) return false;
        cts.Cancel();
        return true;
    }

    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        var heartbeat = HeartbeatLoopAsync(stoppingToken);
        var workers = Enumerable.Range(0, Math.Max(1, limits.Value.MaxConcurrentJobs)).Select(slot => Task.Run(async () =>
        {
            await foreach (var id in _queue.Reader.ReadAllAsync(stoppingToken))
            {
                try
                {
                    await RunAsync(id, stoppingToken);
                }
                catch (Exception e) when (e is not OperationCanceledException || !stoppingToken.IsCancellationRequested)
                {
                    LogJobError(logger, e, id);
                    await FinishAsync(id, SimulationStatuses.Failed, "The simulation failed unexpectedly.", null, CancellationToken.None);
                }
                finally
                {
                    _progress.TryRemove(id, out _);
                    if (_cancels.TryRemove(id, out var cts)) cts.Dispose();
                }
            }
        }, stoppingToken));
        await Task.WhenAll(workers.Append(heartbeat));
    }

    private async Task HeartbeatLoopAsync(CancellationToken stoppingToken)
    {
        try
        {
            while (!stoppingToken.IsCancellationRequested)
            {
                await SweepAsync(stoppingToken);
                await Task.Delay(limits.Value.HeartbeatInterval, time, stoppingToken);
            }
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
        }
    }

    /// <summary>
    /// One heartbeat: confirm the jobs this node holds, stop those that were canceled through another node, and fail
    /// queued or running jobs of other nodes that have not been confirmed for <see cref="SimulationLimits.StaleAfter"/>
    /// (their node stopped; its in-memory queue is gone). A restarted node has a new id, so its old jobs end this way too.
    /// </summary>
    public async Task SweepAsync(CancellationToken ct)
    {
        try
        {
            using var scope = scopes.CreateScope();
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            var now = time.GetUtcNow();
            var jobs = db.Set<SimulationJob>();
            await jobs.Where(j => j.NodeId == NodeId && (j.Status == SimulationStatuses.Queued || j.Status == SimulationStatuses.Running))
                .ExecuteUpdateAsync(u => u.SetProperty(j => j.HeartbeatAt, now), ct);

            var held = _cancels.Keys.ToList();
            if (held.Count > 0)
            {
                var canceledElsewhere = await jobs.Where(j => held.Contains(j.Id) && j.Status == SimulationStatuses.Canceled)
                    .Select(j => j.Id).ToListAsync(ct);
                foreach (var id in canceledElsewhere)
                    if (_cancels.TryGetValue(id, out var cts)) cts.Cancel();
            }

            var staleBefore = now - limits.Value.StaleAfter;
            var reason = $"The node running it stopped before it finished (no heartbeat for {limits.Value.StaleAfter.TotalSeconds:0} s); submit it again.";
            await jobs.Where(j => (j.Status == SimulationStatuses.Queued || j.Status == SimulationStatuses.Running)
                                  && j.NodeId != NodeId && (j.HeartbeatAt == null || j.HeartbeatAt < staleBefore))
                .ExecuteUpdateAsync(u => u.SetProperty(j => j.Status, SimulationStatuses.Failed)
                    .SetProperty(j => j.Reason, reason)
                    .SetProperty(j => j.FinishedAt, now), ct);
        }
        catch (Exception e) when (e is DbUpdateException or InvalidOperationException or System.Data.Common.DbException)
        {
            // The database may be unreachable for a while; the next heartbeat tries again.
            LogSweepFailed(logger, e);
        }
    }

    private async Task RunAsync(string id, CancellationToken stoppingToken)
    {
        if (!_cancels.TryGetValue(id, out var cancel)) return;
        SimulationJob job;
        using (var scope = scopes.CreateScope())
        {
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            job = await db.Set<SimulationJob>().AsNoTracking().FirstAsync(j => j.Id == id, stoppingToken);
            if (job.Status != SimulationStatuses.Queued) return;
            if (cancel.IsCancellationRequested)
            {
                await FinishAsync(id, SimulationStatuses.Canceled, "Canceled by the owner before it started.", null, stoppingToken);
                return;
            }
            // Only a job still queued starts: another node may have canceled it meanwhile.
            var started = await db.Set<SimulationJob>().Where(j => j.Id == id && j.Status == SimulationStatuses.Queued)
                .ExecuteUpdateAsync(u => u.SetProperty(j => j.Status, SimulationStatuses.Running).SetProperty(j => j.StartedAt, time.GetUtcNow()), stoppingToken);
            if (started == 0) return;
        }

        var request = JsonSerializer.Deserialize<CreateSimulationRequest>(job.RequestJson, Json.Results)!;
        var version = await versions.GetAsync(job.ProjectId, job.ModelVersion, stoppingToken);
        var variants = SimulationRequests.Variants(request);
        var total = request.Policies.Count * variants.Count;
        using var deadline = new CancellationTokenSource(limits.Value.MaxRunTime, time);
        using var linked = CancellationTokenSource.CreateLinkedTokenSource(cancel.Token, deadline.Token, stoppingToken);
        var results = new List<SimulationResult>(total);
        _progress[id] = 0;
        try
        {
            foreach (var variant in variants)
            {
                foreach (var policy in request.Policies)
                {
                    var done = results.Count;
                    var progress = new ProgressSink(p => _progress[id] = (done + Math.Clamp(p, 0, 1)) / total);
                    var options = new SimulationOptions
                    {
                        Session = TeachServe.Core.Teaching.SessionOptions.FromProject(version.Settings, request.Seed) with { Policy = policy },
                        Learners = request.Learners,
                        Seed = request.Seed,
                        Variant = variant,
                        Cost = version.Settings.Cost,
                        Features = LearnerKinds.NeedsFeatures(variant) ? version.Features : null,
                    };
                    results.Add(await Task.Run(() => Simulator.Run(version.Model, options, progress, linked.Token), linked.Token));
                    _progress[id] = (double)results.Count / total;
                    await SaveProgressAsync(id, _progress[id], stoppingToken);
                }
            }
        }
        catch (OperationCanceledException) when (!stoppingToken.IsCancellationRequested)
        {
            var (status, reason) = cancel.IsCancellationRequested
                ? (SimulationStatuses.Canceled, "Canceled by the owner.")
                : (SimulationStatuses.Failed, $"Stopped at the run-time limit of {limits.Value.MaxRunTime}; ask for fewer learners, policies or variants.");
            await FinishAsync(id, status, reason, null, CancellationToken.None);
            return;
        }
        await FinishAsync(id, SimulationStatuses.Succeeded, null, JsonSerializer.Serialize(results, Json.Results), stoppingToken);
        LogJobDone(logger, id, total);
    }

    private async Task SaveProgressAsync(string id, double progress, CancellationToken ct)
    {
        using var scope = scopes.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        await db.Set<SimulationJob>().Where(j => j.Id == id).ExecuteUpdateAsync(u => u.SetProperty(j => j.Progress, progress), ct);
    }

    private async Task FinishAsync(string id, string status, string? reason, string? resultJson, CancellationToken ct)
    {
        using var scope = scopes.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        var progress = status == SimulationStatuses.Succeeded ? 1.0 : _progress.GetValueOrDefault(id);
        // A job that already ended (canceled through another node, or failed as an orphan) keeps that ending.
        await db.Set<SimulationJob>()
            .Where(j => j.Id == id && (j.Status == SimulationStatuses.Queued || j.Status == SimulationStatuses.Running))
            .ExecuteUpdateAsync(u => u
            .SetProperty(j => j.Status, status)
            .SetProperty(j => j.Reason, reason)
            .SetProperty(j => j.ResultJson, resultJson)
            .SetProperty(j => j.Progress, progress)
            .SetProperty(j => j.FinishedAt, time.GetUtcNow()), ct);
    }

    private sealed class ProgressSink(Action<double> report) : IProgress<double>
    {
        public void Report(double value) => report(value);
    }

    [LoggerMessage(Level = LogLevel.Error, Message = "Simulation {JobId} failed")]
    private static partial void LogJobError(ILogger logger, Exception e, string jobId);

    [LoggerMessage(Level = LogLevel.Information, Message = "Simulation {JobId} finished {Runs} policy × variant runs")]
    private static partial void LogJobDone(ILogger logger, string jobId, int runs);

    [LoggerMessage(Level = LogLevel.Warning, Message = "Simulation heartbeat failed; trying again at the next one")]
    private static partial void LogSweepFailed(ILogger logger, Exception e);
}
