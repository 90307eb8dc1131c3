using System.Collections.Concurrent;
using System.Threading.Channels;
using TeachServe.Core.Model;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Versions;

/// <summary>
/// Background compilation: large projects, and compiles that found no free slot (<see cref="CompileSlots"/>).
/// Each job waits for a slot; rows left <c>compiling</c> by a restart are resumed. The queue holds at most one
/// job per project, because the database allows one <c>compiling</c> row per project.
/// </summary>
[System.Diagnostics.CodeAnalysis.SuppressMessage("Naming", "CA1711", Justification = "A queue of background jobs, which is what the name says; not a collection type.")]
public sealed partial class VersionCompileQueue(
    IServiceScopeFactory scopes, ModelVersionCache cache, CompileSlots slots, TimeProvider time, ILogger<VersionCompileQueue> logger)
    : BackgroundService, IStartupStep
{
    private readonly Channel<(string ProjectId, int Number)> _jobs = Channel.CreateUnbounded<(string, int)>();
    private readonly ConcurrentDictionary<(string, int), byte> _running = new();

    /// <summary>Raised after a background compile finished (ready or failed), with project id and version number.</summary>
    public event EventHandler<int>? Compiled;

    /// <summary>Percent done of the versions this node is compiling in the background (held in memory, not stored).</summary>
    private readonly ConcurrentDictionary<(string ProjectId, int Number), double> _percent = new();

    public void Enqueue(string projectId, int number) => _jobs.Writer.TryWrite((projectId, number));

    /// <summary>Percent done (0–100) of a version compiling on this node, or null.</summary>
    public double? Percent(string projectId, int number) => _percent.TryGetValue((projectId, number), out var p) ? p : null;

    public async Task RunAsync(TeachServeDb db, StartupBanner banner, CancellationToken ct)
    {
        var pending = await db.ModelVersions.AsNoTracking().Where(v => v.Status == VersionStatuses.Compiling)
            .Select(v => new { v.ProjectId, v.Number }).ToListAsync(ct);
        foreach (var p in pending) Enqueue(p.ProjectId, p.Number);
    }

    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        try
        {
            await foreach (var job in _jobs.Reader.ReadAllAsync(stoppingToken))
            {
                // The same row enqueued twice (a resume beside a request that handed it over) compiles once.
                if (!_running.TryAdd(job, 0)) continue;
                await slots.EnterAsync(stoppingToken);
                _ = Task.Run(() => RunJobAsync(job.ProjectId, job.Number, stoppingToken), CancellationToken.None);
            }
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
        }
    }

    private async Task RunJobAsync(string projectId, int number, CancellationToken stoppingToken)
    {
        try
        {
            using var scope = scopes.CreateScope();
            var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            _percent[(projectId, number)] = 0;
            var progress = new Recorder(_percent, (projectId, number));
            await VersionCompiler.CompilePendingAsync(db, projectId, number, cache, time, logger, stoppingToken, progress);
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
            return;
        }
        catch (Exception e) when (DatabaseUnavailable.Is(e))
        {
            // An outage must not stop the host; the row is still 'compiling', so try it again later.
            LogRetryCompile(logger, projectId, number, e.GetBaseException().Message);
            _ = RequeueLaterAsync(projectId, number, stoppingToken);
            return;
        }
        catch (Exception e)
        {
            LogJobFailed(logger, e, projectId, number);
            return;
        }
        finally
        {
            _percent.TryRemove((projectId, number), out _);
            _running.TryRemove((projectId, number), out _);
            slots.Exit();
        }
        Compiled?.Invoke(projectId, number);
    }

    private async Task RequeueLaterAsync(string projectId, int number, CancellationToken ct)
    {
        try
        {
            await Task.Delay(DatabaseUnavailable.RetryAfter, time, ct);
            Enqueue(projectId, number);
        }
        catch (OperationCanceledException)
        {
        }
    }

    /// <summary>Writes each report straight into the table (synchronously, unlike <see cref="Progress{T}"/>, which posts).</summary>
    private sealed class Recorder(ConcurrentDictionary<(string, int), double> table, (string, int) key) : IProgress<CompileProgress>
    {
        public void Report(CompileProgress value) => table[key] = Math.Round(100 * value.Fraction, 1);
    }

    [LoggerMessage(Level = LogLevel.Warning, Message = "Compiling {ProjectId} version {Number} waits for the database: {Reason}")]
    private static partial void LogRetryCompile(ILogger logger, string projectId, int number, string reason);

    [LoggerMessage(Level = LogLevel.Error, Message = "Background compile of {ProjectId} version {Number} stopped")]
    private static partial void LogJobFailed(ILogger logger, Exception exception, string projectId, int number);
}
