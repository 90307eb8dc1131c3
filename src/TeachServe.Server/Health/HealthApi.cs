using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Health;

public sealed record HealthStatus(string Status);

public static class HealthApi
{
    public static IEndpointRouteBuilder MapHealth(this IEndpointRouteBuilder app)
    {
        app.MapGet("/healthz", () => TypedResults.Ok(new HealthStatus("ok")))
            .WithTags("Health").DisableRateLimiting().WithSummary("The process is up.");
        app.MapGet("/readyz", Ready)
            .WithTags("Health").DisableRateLimiting().WithSummary("The database is reachable and fully migrated.");
        return app;
    }

    public static async Task<Results<Ok<HealthStatus>, ProblemHttpResult>> Ready(
        TeachServeDb db, StartupState startup, CancellationToken ct)
    {
        if (!startup.IsReady) return NotReady("The server is still starting (migrations, demo project).");
        try
        {
            if (!await db.Database.CanConnectAsync(ct)) return NotReady("The database cannot be reached.");
            var pending = await db.Database.GetPendingMigrationsAsync(ct);
            return pending.Any()
                ? NotReady($"Migrations not applied: {string.Join(", ", pending)}.")
                : TypedResults.Ok(new HealthStatus("ready"));
        }
        catch (Exception e) when (e is not OperationCanceledException)
        {
            return NotReady("The database cannot be reached.");
        }
    }

    private static ProblemHttpResult NotReady(string detail) =>
        TypedResults.Problem(detail, statusCode: StatusCodes.Status503ServiceUnavailable, title: "Not ready");
}
