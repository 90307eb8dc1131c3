using Microsoft.AspNetCore.Http.HttpResults;
using TeachServe.Server.Auth;
using TeachServe.Server.Contract;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.Releases;

public sealed record ReleaseView(string SessionId, string WorkerRef, int ModelVersion, DateTimeOffset ReleasedAt, EvidenceView Evidence);

/// <summary>A page of the feed; <see cref="Next"/> is always set, so a platform polls with it and gets only newer releases.</summary>
public sealed record ReleasePage(IReadOnlyList<ReleaseView> Releases, string Next);

/// <summary>The release feed route; <see cref="ReleaseOperations"/> reads it.</summary>
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
        string projectId, string? after, int? limit, ReleaseOperations releases, CancellationToken ct) =>
        (await releases.ListAsync(projectId, after, limit, ct)).Answer(TypedResults.Ok);
}
