using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Projects;
using TeachServe.Core.Teaching;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Projects;
using TeachServe.Server.Sessions.Store;
using TeachServe.Server.Versions;

namespace TeachServe.Server.Exposure;

/// <summary>Reads how often each test item has been shown. Problems are returned, not thrown.</summary>
public sealed class ExposureOperations(TeachServeDb db, SessionReads reads, ModelVersionCache versions)
{
    /// <summary>Each test item's exposure, most exposed first, with the target and administration probability starting sessions get.</summary>
    public async Task<Outcome<TestExposureReport>> ReportAsync(string projectId, CancellationToken ct)
    {
        var project = await db.Projects.AsNoTracking().FirstOrDefaultAsync(p => p.Id == projectId, ct);
        if (project is null) return Problems.NotFound("No such project.");
        var number = await reads.NewestReadyVersionAsync(db, projectId, ct);
        var target = number is { } n
            ? (await versions.GetAsync(projectId, n, ct)).Settings.Gate.Test.MaxExposure
            : ProjectOperations.Settings(project).Gate.Test.MaxExposure;

        var (shown, tested) = await ExposureCounts.ReadAsync(db, projectId, ct);
        var testItems = await db.Items.AsNoTracking().Where(i => i.ProjectId == projectId && i.Pool == Pools.Test)
            .Select(i => i.ItemId).ToListAsync(ct);
        // Items counted once but since removed or moved to the teach pool stay listed: they were shown all the same.
        var ids = testItems.Union(shown.Keys, StringComparer.Ordinal).ToList();
        var counts = ids.Select(id => shown.GetValueOrDefault(id)).ToArray();
        var k = ExposureControl.AdministrationProbabilities(counts, tested, target);
        var items = ids.Select((id, i) => new TestItemExposure(id, counts[i], tested > 0 ? (double)counts[i] / tested : null, k[i]))
            .OrderByDescending(e => e.Sessions).ThenBy(e => e.ItemId, StringComparer.Ordinal).ToList();
        return new TestExposureReport(tested, target, number, items);
    }
}
