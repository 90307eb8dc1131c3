using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Health;

/// <summary>
/// The answer of <c>/readyz</c>, checked against the database at most once per <see cref="Lifetime"/> on this
/// node: concurrent probes share one check, and every other probe gets the last answer. A flood of probes then
/// costs the database nothing more than one query every two seconds.
/// </summary>
public sealed class ReadinessProbe(IServiceScopeFactory scopes, StartupState startup, TimeProvider time) : IDisposable
{
    /// <summary>Long enough to absorb a flood, short enough for a load balancer to notice an outage within a probe or two.</summary>
    public static readonly TimeSpan Lifetime = TimeSpan.FromSeconds(2);

    private readonly SemaphoreSlim _checking = new(1, 1);
    private (DateTimeOffset At, string? Problem)? _last;
    private int _checks;

    /// <summary>Database checks made so far (for tests and diagnostics).</summary>
    public int Checks => Volatile.Read(ref _checks);

    /// <summary>Null when ready, else why not.</summary>
    public async Task<string?> ProblemAsync(CancellationToken ct)
    {
        if (!startup.IsReady) return "The server is still starting (migrations, demo project).";
        if (Fresh() is { } cached) return cached.Problem;
        await _checking.WaitAsync(ct);
        try
        {
            if (Fresh() is { } again) return again.Problem;
            var problem = await CheckAsync(ct);
            _last = (time.GetUtcNow(), problem);
            return problem;
        }
        finally
        {
            _checking.Release();
        }
    }

    private (DateTimeOffset At, string? Problem)? Fresh() =>
        _last is { } last && time.GetUtcNow() - last.At < Lifetime ? last : null;

    public void Dispose() => _checking.Dispose();

    private async Task<string?> CheckAsync(CancellationToken ct)
    {
        Interlocked.Increment(ref _checks);
        using var scope = scopes.CreateScope();
        var db = scope.ServiceProvider.GetRequiredService<TeachServeDb>();
        try
        {
            if (!await db.Database.CanConnectAsync(ct)) return "The database cannot be reached.";
            var pending = await db.Database.GetPendingMigrationsAsync(ct);
            return pending.Any() ? $"Migrations not applied: {string.Join(", ", pending)}." : null;
        }
        catch (Exception e) when (e is not OperationCanceledException)
        {
            return "The database cannot be reached.";
        }
    }
}
