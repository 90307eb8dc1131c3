using System.Globalization;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.Releases;

public sealed record ReleaseView(string SessionId, string WorkerRef, int ModelVersion, DateTimeOffset ReleasedAt, EvidenceView Evidence);

/// <summary>A page of the feed; <see cref="Next"/> is always set, so a platform polls with it and gets only newer releases.</summary>
public sealed record ReleasePage(IReadOnlyList<ReleaseView> Releases, string Next);

public static class ReleasesApi
{
    public static RouteGroupBuilder MapReleases(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/projects/{projectId}/releases").WithTags("Releases");
        group.MapGet("/", ListReleases).RequireKey(KeyRole.Owner, KeyRole.Embed).WithName("listReleases")
            .Problem(StatusCodes.Status400BadRequest, "'after' is not a cursor of this feed, or 'limit' is out of range.")
            .WithSummary("The release feed, oldest first: pass the previous page's 'next' as 'after' to get newer releases.");
        return group;
    }

    public static async Task<Results<Ok<ReleasePage>, ProblemHttpResult>> ListReleases(
        string projectId, string? after, int? limit, TeachServeDb db, CancellationToken ct)
    {
        var from = Cursor.DecodeNumber(after, "after") ?? 0;
        var take = Cursor.Limit(limit);
        if (!await db.Projects.AnyAsync(p => p.Id == projectId, ct)) return Problems.NotFound("No such project.");
        var rows = await db.Releases.AsNoTracking().Where(r => r.ProjectId == projectId && r.Id > from)
            .OrderBy(r => r.Id).Take(take).ToListAsync(ct);
        var next = rows.Count > 0 ? rows[^1].Id : from;
        return TypedResults.Ok(new ReleasePage(
            rows.Select(r => new ReleaseView(r.SessionId, r.WorkerRef, r.ModelVersion, r.ReleasedAt, Json.Deserialize<EvidenceView>(r.EvidenceJson))).ToList(),
            Cursor.Encode(next.ToString(CultureInfo.InvariantCulture))));
    }
}
