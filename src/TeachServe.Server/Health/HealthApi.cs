using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Health;

public sealed record HealthStatus(string Status);

/// <summary>Liveness and readiness probes: cheap (no database query on <c>/healthz</c>; a cached one on <c>/readyz</c>, which is rate limited per client address like any request without a key).</summary>
public static class HealthApi
{
    /// <summary>What <see cref="HealthStatus.Status"/> says: <c>ok</c> on /healthz, <c>ready</c> on /readyz.</summary>
    public static readonly IReadOnlyList<string> Statuses = ["ok", "ready"];

    public static IEndpointRouteBuilder MapHealth(this IEndpointRouteBuilder app)
    {
        // Liveness does no work at all (cheaper than a rate-limit check), and the load harness measures its baseline on it.
        app.MapGet("/healthz", () => TypedResults.Ok(new HealthStatus("ok")))
            .WithTags("Health").WithName("getLiveness").DisableRateLimiting().WithSummary("The process is up.");
        app.MapGet("/readyz", Ready)
            .WithTags("Health").WithName("getReadiness").Problem(StatusCodes.Status503ServiceUnavailable, "The database is unreachable or not fully migrated.").WithSummary("The database is reachable and fully migrated (checked at most every two seconds per node).");
        return app;
    }

    public static async Task<Results<Ok<HealthStatus>, ProblemHttpResult>> Ready(ReadinessProbe probe, CancellationToken ct) =>
        await probe.ProblemAsync(ct) is { } problem
            ? Problems.Of(StatusCodes.Status503ServiceUnavailable, "Not ready", problem)
            : TypedResults.Ok(new HealthStatus("ready"));
}
