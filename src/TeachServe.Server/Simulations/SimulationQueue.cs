using System.Collections.Concurrent;
using System.Text.Json;
using System.Threading.Channels;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Core.Simulation;
using TeachServe.Core.Teaching;
using TeachServe.Server.Experiments;
using TeachServe.Server.Persistence;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Simulations;

/// <summary>
/// Runs submitted simulations in the background, <see cref="SimulationLimits.MaxConcurrentJobs"/> at a time. Progress
/// is kept in memory while a job runs (and written to its row after each policy × variant), cancellation is by a
/// per-job token, and a job past <see cref="SimulationLimits.MaxRunTime"/> (on the injected clock) ends failed.
/// </summary>
public sealed partial class SimulationQueue(
    IServiceScopeFactory scopes, ModelVersionCache versions, IOptions<SimulationLimits> limits, TimeProvider time,
    ILogger<SimulationQueue> logger) : BackgroundService
{
    private readonly Channel<string> _queue = Channel.CreateUnbounded<string>();
    private readonly ConcurrentDictionary<string, CancellationTokenSource> _cancels = new();
    private readonly ConcurrentDictionary<string, double> _progress = new();

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
        await AbandonLeftoversAsync(stoppingToken);
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
        await Task.WhenAll(workers);
    }

    /// <summary>Jobs a previous process left queued or running can never finish; say so on their rows.</summary>
    private async Task AbandonLeftoversAsync(CancellationToken ct)
    {
        try
        {
            using var scope = scopes.CreateScope();
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            var pending = await db.Set<SimulationJob>()
                .Where(j => j.Status == SimulationStatuses.Queued || j.Status == SimulationStatuses.Running)
                .Select(j => j.Id).ToListAsync(ct);
            // Jobs submitted to this process since it started are its own, not leftovers.
            var leftovers = pending.Where(id => !_cancels.ContainsKey(id)).ToList();
            if (leftovers.Count == 0) return;
            await db.Set<SimulationJob>()
                .Where(j => leftovers.Contains(j.Id))
                .ExecuteUpdateAsync(u => u.SetProperty(j => j.Status, SimulationStatuses.Failed)
                    .SetProperty(j => j.Reason, "The server restarted before the simulation finished; submit it again.")
                    .SetProperty(j => j.FinishedAt, time.GetUtcNow()), ct);
        }
        catch (Exception e) when (e is DbUpdateException or InvalidOperationException or Microsoft.Data.Sqlite.SqliteException)
        {
            // The schema may not exist yet on a first start; there is nothing to abandon then.
            LogLeftovers(logger, e);
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
            await db.Set<SimulationJob>().Where(j => j.Id == id)
                .ExecuteUpdateAsync(u => u.SetProperty(j => j.Status, SimulationStatuses.Running).SetProperty(j => j.StartedAt, time.GetUtcNow()), stoppingToken);
        }

        var request = JsonSerializer.Deserialize<CreateSimulationRequest>(job.RequestJson, ReportJson.Options)!;
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
        await FinishAsync(id, SimulationStatuses.Succeeded, null, JsonSerializer.Serialize(results, ReportJson.Options), stoppingToken);
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
        await db.Set<SimulationJob>().Where(j => j.Id == id).ExecuteUpdateAsync(u => u
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

    [LoggerMessage(Level = LogLevel.Debug, Message = "No leftover simulations could be marked")]
    private static partial void LogLeftovers(ILogger logger, Exception e);
}
