using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Workers;

namespace TeachServe.Server.Projects;

/// <summary>A project's new key, shown once.</summary>
public sealed record KeyRotated(string ProjectId, string Kind, string Key, DateTimeOffset RotatedAt);

/// <summary>
/// Rotating and revoking a project's owner and embed keys. Only the key's hash is stored, and every request reads it
/// from the database (no node caches it), so a change holds on every node from the next request on. Each change is
/// an audit entry. A revoked key's hash is all zeros, which no key hashes to (SHA-256 preimage), so nothing matches
/// it until the key is rotated again; an admin can rotate a lost or revoked owner key.
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
        string projectId, string kind, HttpContext http, TeachServeDb db, TimeProvider time, CancellationToken ct)
    {
        if (KindProblem(kind) is { } problem) return problem;
        return await RotateAsync(db, time, projectId, kind, Actor(http), ct) is { } rotated
            ? TypedResults.Ok(rotated)
            : Problems.NotFound("No such project.");
    }

    public static async Task<Results<NoContent, ProblemHttpResult>> Revoke(
        string projectId, string kind, HttpContext http, TeachServeDb db, TimeProvider time, CancellationToken ct)
    {
        if (KindProblem(kind) is { } problem) return problem;
        return await RevokeAsync(db, time, projectId, kind, Actor(http), ct)
            ? TypedResults.NoContent()
            : Problems.NotFound("No such project.");
    }

    /// <summary>Replaces the key of <paramref name="kind"/> (owner or embed) and records who did it; null if there is no such project.</summary>
    public static async Task<KeyRotated?> RotateAsync(TeachServeDb db, TimeProvider time, string projectId, string kind, string by, CancellationToken ct)
    {
        var project = await db.Projects.FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return null;
        var key = kind == OwnerKind ? ApiKeys.NewOwnerKey(projectId) : ApiKeys.NewEmbedKey(projectId);
        var now = time.GetUtcNow();
        SetHash(project, kind, ApiKeys.Hash(key));
        project.UpdatedAt = now;
        db.Audit.Add(Entry(projectId, RotateAction, kind, by, now));
        await db.SaveChangesAsync(ct);
        return new KeyRotated(projectId, kind, key, now);
    }

    /// <summary>Revokes the key of <paramref name="kind"/> and records who did it; false if there is no such project.</summary>
    public static async Task<bool> RevokeAsync(TeachServeDb db, TimeProvider time, string projectId, string kind, string by, CancellationToken ct)
    {
        var project = await db.Projects.FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return false;
        var now = time.GetUtcNow();
        SetHash(project, kind, new byte[32]);
        project.UpdatedAt = now;
        db.Audit.Add(Entry(projectId, RevokeAction, kind, by, now));
        await db.SaveChangesAsync(ct);
        return true;
    }

    private static string Actor(HttpContext http) => http.User.Role().ToString().ToLowerInvariant();

    private static ProblemHttpResult? KindProblem(string kind) => kind is OwnerKind or EmbedKind
        ? null
        : Problems.BadRequest($"The key kind must be '{OwnerKind}' or '{EmbedKind}' (session tokens end with their session; the admin key is configured on the server).");

    private static void SetHash(Project project, string kind, byte[] hash)
    {
        if (kind == OwnerKind) project.OwnerKeyHash = hash;
        else project.EmbedKeyHash = hash;
    }

    /// <summary>The subject is the key (its kind), never the key's value or hash; the details say who acted (owner, admin, console).</summary>
    private static AuditEntry Entry(string projectId, string action, string kind, string by, DateTimeOffset now) => new()
    {
        ProjectId = projectId,
        Action = action,
        SubjectHash = $"key:{kind}",
        DetailsJson = Json.Serialize(new { kind, by }),
        At = now,
    };
}
