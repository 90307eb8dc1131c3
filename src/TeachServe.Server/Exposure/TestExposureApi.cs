using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Projects;
using TeachServe.Core.Teaching;
using TeachServe.Server.Auth;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Sessions.Store;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Exposure;

/// <summary>One test item's exposure: sessions shown it, their share of tested sessions, and the K a session starting now gets.</summary>
public sealed record TestItemExposure(string ItemId, int Sessions, double? Rate, double AdministrationProbability);

/// <param name="MaxExposure">The exposure target of the newest ready version (1 = off), which starting sessions use.</param>
public sealed record TestExposureReport(int TestedSessions, double MaxExposure, int? ModelVersion, IReadOnlyList<TestItemExposure> Items);

public static class TestExposureApi
{
    public static RouteGroupBuilder MapTestExposure(this IEndpointRouteBuilder api)
    {
        var group = api.MapGroup("/projects/{projectId}/test-exposure").WithTags("Sessions");
        group.MapGet("/", GetExposure).RequireKey(KeyRole.Owner).WithName("getTestExposure")
            .WithSummary("How many tested sessions were shown each test item, most exposed first, with the exposure target and each item's administration probability.");
        return group;
    }

    public static async Task<Results<Ok<TestExposureReport>, ProblemHttpResult>> GetExposure(
        string projectId, TeachServeDb db, SessionReads reads, ModelVersionCache versions, CancellationToken ct)
    {
        var project = await db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return Problems.NotFound("No such project.");
        var number = await reads.NewestReadyVersionAsync(db, projectId, ct);
        var target = number is { } n
            ? (await versions.GetAsync(projectId, n, ct)).Settings.Gate.Test.MaxExposure
            : ProjectsApi.Settings(project).Gate.Test.MaxExposure;

        var (shown, tested) = await ExposureCounts.ReadAsync(db, projectId, ct);
        var testItems = await db.Items.AsNoTracking().Where(i => i.ProjectId == projectId && i.Pool == Pools.Test)
            .Select(i => i.ItemId).ToListAsync(ct);
        // Items counted once but since removed or moved to the teach pool stay listed: they were shown all the same.
        var ids = testItems.Union(shown.Keys, StringComparer.Ordinal).ToList();
        var counts = ids.Select(id => shown.GetValueOrDefault(id)).ToArray();
        var k = ExposureControl.AdministrationProbabilities(counts, tested, target);
        var items = ids.Select((id, i) => new TestItemExposure(id, counts[i], tested > 0 ? (double)counts[i] / tested : null, k[i]))
            .OrderByDescending(e => e.Sessions).ThenBy(e => e.ItemId, StringComparer.Ordinal).ToList();
        return TypedResults.Ok(new TestExposureReport(tested, target, number, items));
    }
}
