using System.Text.Json.Nodes;
using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Versions;

public sealed record VersionView(
    int Version, string Status, int TeachItems, int TestItems, JsonNode? Summary, string? Error,
    DateTimeOffset CreatedAt, DateTimeOffset? ReadyAt, double? Progress = null);

public static class VersionsApi
{
    public static RouteGroupBuilder MapVersions(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/projects/{projectId}/versions").WithTags("Versions");
        group.MapPost("/", CreateVersion).RequireKey(KeyRole.Owner).WithName("compileVersion")
            .Problem(StatusCodes.Status409Conflict, "Another compile of the project is running, or the project holds its most versions (Retry-After while busy).")
            .Problem(StatusCodes.Status422UnprocessableEntity, "The items and settings cannot be compiled yet, or compiling failed; errors names the problems.")
            .WithSummary("Compile the current items and settings into a new immutable model version (201 when done; 202 while it compiles in the background; 200 with the existing version when the same settings and items were compiled before; 409 while another compile of the project runs or when the project holds its most versions).");
        group.MapGet("/", ListVersions).RequireKey(KeyRole.Owner).WithName("listVersions").WithSummary("All model versions, newest first.");
        group.MapGet("/{version:int}", GetVersion).RequireKey(KeyRole.Owner).WithName("getVersion").WithSummary("One model version: status and compile summary.");
        return group;
    }

    public static async Task<Results<Created<VersionView>, Accepted<VersionView>, Ok<VersionView>, ProblemHttpResult>> CreateVersion(
        string projectId, VersionOperations versions, HttpResponse response, CancellationToken ct)
    {
        var outcome = await versions.CompileAsync(projectId, ct);
        var location = outcome.Version is { } v ? VersionOperations.Location(projectId, v.Version) : null;
        switch (outcome)
        {
            case { State: CompileState.Compiled, Version: { } compiled }:
                return TypedResults.Created(location, compiled);
            case { State: CompileState.Compiling, Version: { } compiling }:
                return TypedResults.Accepted(location, compiling);
            case { State: CompileState.Existing, Version: { } same }:
                response.Headers.Location = location;
                return TypedResults.Ok(same);
            case { State: CompileState.Busy }:
                response.Headers.RetryAfter = "5";
                return outcome.Problem!;
            default:
                return outcome.Problem!;
        }
    }

    public static async Task<Ok<List<VersionView>>> ListVersions(string projectId, VersionOperations versions, CancellationToken ct) =>
        TypedResults.Ok(await versions.ListAsync(projectId, ct));

    public static async Task<Results<Ok<VersionView>, ProblemHttpResult>> GetVersion(
        string projectId, int version, VersionOperations versions, CancellationToken ct) =>
        await versions.GetAsync(projectId, version, ct) is { } view ? TypedResults.Ok(view) : Problems.NotFound($"No model version {version}.");
}
