using System.Globalization;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.Releases;

/// <summary>Reads the release feed. Problems are returned, not thrown.</summary>
public sealed class ReleaseOperations(TeachServeDb db)
{
    /// <summary>Releases after the cursor <paramref name="after"/>, oldest first; 400 for a foreign cursor or a limit out of range.</summary>
    public async Task<Outcome<ReleasePage>> ListAsync(string projectId, string? after, int? limit, CancellationToken ct)
    {
        var page = Cursor.ReadNumberPage(after, "after", limit);
        if (page.Problem is { } badPage) return badPage;
        var (from, take) = page.Value;
        if (await ProjectScope.MissingProjectAsync(db, projectId, ct) is { } missing) return missing;
        var rows = await db.Releases.AsNoTracking().Where(r => r.ProjectId == projectId && r.Id > from)
            .OrderBy(r => r.Id).Take(take).ToListAsync(ct);
        var next = rows.Count > 0 ? rows[^1].Id : from;
        return new ReleasePage(
            rows.Select(r => new ReleaseView(r.SessionId, r.WorkerRef, r.ModelVersion, r.ReleasedAt, Json.Deserialize<EvidenceView>(r.EvidenceJson))).ToList(),
            Cursor.Encode(next.ToString(CultureInfo.InvariantCulture)));
    }
}
