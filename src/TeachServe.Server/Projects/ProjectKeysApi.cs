using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Projects;

/// <summary>A project's new key, shown once.</summary>
public sealed record KeyRotated(string ProjectId, string Kind, string Key, DateTimeOffset RotatedAt);

/// <summary>
/// Rotating and revoking a project's owner and embed keys (<see cref="ProjectOperations"/>). Only the key's hash is
/// stored, and every request reads it from the database (no node caches it), so a change holds on every node from the
/// next request on. Each change is an audit entry; an admin can rotate a lost or revoked owner key.
/// </summary>
public static class ProjectKeysApi
{
    public const string OwnerKind = "owner";
    public const string EmbedKind = "embed";
    public const string RotateAction = "key.rotated";
    public const string RevokeAction = "key.revoked";
    public static readonly IReadOnlyList<string> Kinds = [OwnerKind, EmbedKind];
    private const string KindDescription = "The key kind is neither owner nor embed.";

    public static RouteGroupBuilder MapProjectKeys(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/projects/{projectId}/keys").WithTags("Projects");
        group.MapPost("/{kind}/rotation", Rotate).RequireKey(KeyRole.Owner).WithName("rotateProjectKey")
            .Problem(StatusCodes.Status400BadRequest, KindDescription)
            .WithSummary("Replace the owner or embed key: the old one stops working at once on every node; the new one is shown once.");
        group.MapDelete("/{kind}", Revoke).RequireKey(KeyRole.Owner).WithName("revokeProjectKey")
            .Problem(StatusCodes.Status400BadRequest, KindDescription)
            .WithSummary("Revoke the owner or embed key: nothing matches it until it is rotated (an admin can rotate a revoked owner key).");
        return group;
    }

    public static async Task<Results<Ok<KeyRotated>, ProblemHttpResult>> Rotate(
        string projectId, string kind, HttpContext http, ProjectOperations projects, CancellationToken ct)
    {
        if (KindProblem(kind) is { } problem) return problem;
        return await projects.RotateKeyAsync(projectId, kind, Actor(http), ct) is { } rotated
            ? TypedResults.Ok(rotated)
            : Problems.NotFound("No such project.");
    }

    public static async Task<Results<NoContent, ProblemHttpResult>> Revoke(
        string projectId, string kind, HttpContext http, ProjectOperations projects, CancellationToken ct)
    {
        if (KindProblem(kind) is { } problem) return problem;
        return await projects.RevokeKeyAsync(projectId, kind, Actor(http), ct)
            ? TypedResults.NoContent()
            : Problems.NotFound("No such project.");
    }

    private static string Actor(HttpContext http) => http.User.Role().ToString().ToLowerInvariant();

    private static ProblemHttpResult? KindProblem(string kind) => kind is OwnerKind or EmbedKind
        ? null
        : Problems.BadRequest($"The key kind must be '{OwnerKind}' or '{EmbedKind}' (session tokens end with their session; the admin key is configured on the server).");
}
