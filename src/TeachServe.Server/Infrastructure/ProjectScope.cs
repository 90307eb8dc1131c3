using System.Security.Claims;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Auth;
using TeachServe.Server.Persistence;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Infrastructure;

/// <summary>A stored row that belongs to one project (an experiment, a fit, a simulation).</summary>
public interface IProjectOwned
{
    string Id { get; }
    string ProjectId { get; }
}

/// <summary>
/// The lookups operations share before they do their work: the project of the route, a ready model version of it, and a
/// row by id as the key may see it. Each answers the problem a client gets when the thing is not there.
/// </summary>
public static class ProjectScope
{
    /// <summary>404 "No such project." when the project does not exist; null when it does.</summary>
    public static async Task<ProblemHttpResult?> MissingProjectAsync(TeachServeDb db, string projectId, CancellationToken ct) =>
        await db.Projects.AnyAsync(p => p.Id == projectId, ct) ? null : Problems.NotFound("No such project.");

    /// <summary>The number of model version <paramref name="number"/>, or of the newest ready one when null; 404 unless it is ready.</summary>
    public static async Task<Outcome<int>> ReadyVersionAsync(TeachServeDb db, string projectId, int? number, CancellationToken ct)
    {
        number ??= await db.ModelVersions.Where(v => v.ProjectId == projectId && v.Status == VersionStatuses.Ready)
            .MaxAsync(v => (int?)v.Number, ct);
        if (number is null || !await db.ModelVersions.AnyAsync(v => v.ProjectId == projectId && v.Number == number && v.Status == VersionStatuses.Ready, ct))
            return Problems.NotFound("No such ready model version.");
        return number.Value;
    }

    /// <summary>
    /// The row with id <paramref name="id"/> if it belongs to the key's project (any project for the admin key); else
    /// null, so that another project's key sees the same 404 as a wrong id.
    /// </summary>
    public static async Task<T?> FindOwnedAsync<T>(IQueryable<T> rows, ClaimsPrincipal user, string id, string prefix, CancellationToken ct)
        where T : class, IProjectOwned
    {
        if (!Ids.LooksLike(id, prefix)) return null;
        var row = await rows.FirstOrDefaultAsync(r => r.Id == id, ct);
        if (row is null) return null;
        return user.Role() == KeyRole.Admin || row.ProjectId == user.ProjectId() ? row : null;
    }
}
