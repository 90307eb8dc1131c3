using System.Threading.Channels;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Versions;

/// <summary>Background compilation of large projects, one at a time; rows left <c>compiling</c> by a restart are resumed.</summary>
public sealed partial class VersionCompileQueue(
    IServiceScopeFactory scopes, ModelVersionCache cache, TimeProvider time, ILogger<VersionCompileQueue> logger)
    : BackgroundService, IStartupStep
{
    private readonly Channel<(string ProjectId, int Number)> _jobs = Channel.CreateUnbounded<(string, int)>();

    /// <summary>Raised after a background compile finished (ready or failed), with project id and version number.</summary>
    public event EventHandler<int>? Compiled;

    public void Enqueue(string projectId, int number) => _jobs.Writer.TryWrite((projectId, number));

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
            await foreach (var (projectId, number) in _jobs.Reader.ReadAllAsync(stoppingToken))
            {
                using var scope = scopes.CreateScope();
                var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
                try
                {
                    await VersionCompiler.CompilePendingAsync(db, projectId, number, cache, time, logger, stoppingToken);
                }
                catch (Exception e) when (DatabaseUnavailable.Is(e))
                {
                    // An outage must not stop the host; the row is still 'compiling', so try it again later.
                    LogRetryCompile(logger, projectId, number, e.GetBaseException().Message);
                    _ = RequeueLaterAsync(projectId, number, stoppingToken);
                    continue;
                }
                Compiled?.Invoke(projectId, number);
            }
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
        }
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

    [LoggerMessage(Level = LogLevel.Warning, Message = "Compiling {ProjectId} version {Number} waits for the database: {Reason}")]
    private static partial void LogRetryCompile(ILogger logger, string projectId, int number, string reason);
}
