using System.Globalization;
using System.Text;
using Microsoft.EntityFrameworkCore;
using TeachServe.Core.Csv;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Sessions;

/// <summary>
/// Every session of a project as CSV, one row per session, oldest first, for an owner's spreadsheet: who, which
/// version and policy, how far, the test totals over every attempt, the predicted error and the times. Cells go
/// through <see cref="CsvCells"/> (a workerRef chosen by a worker cannot become a formula).
/// </summary>
public static class SessionsCsv
{
    public static readonly string[] Columns =
    [
        "sessionId", "workerRef", "phase", "modelVersion", "policy", "itemsTaught", "testAnswered", "testErrors",
        "attempts", "predictedError", "startedAt", "endedAt", "minutes", "purpose",
    ];

    public static async Task<string> WriteAsync(TeachServeDb db, string projectId, CancellationToken ct)
    {
        var rows = await db.Sessions.AsNoTracking().Where(s => s.ProjectId == projectId).OrderBy(s => s.Id).ToListAsync(ct);
        var csv = new StringBuilder();
        CsvCells.AppendRow(csv, Columns);
        foreach (var s in rows)
        {
            var evidence = s.EvidenceJson is null ? null : Json.Deserialize<EvidenceView>(s.EvidenceJson);
            CsvCells.AppendRow(csv,
                s.Id, s.WorkerRef, s.Phase, Num(s.ModelVersion), s.Policy, Num(s.TaughtCount), Num(evidence?.TestAnswered ?? s.TestAnswered),
                evidence is null ? "" : Num(evidence.TestErrors), evidence?.Attempts is { } a ? Num(a.Count) : "",
                s.PredictedError.ToString("0.####", CultureInfo.InvariantCulture),
                s.CreatedAt.ToString("O", CultureInfo.InvariantCulture), s.EndedAt?.ToString("O", CultureInfo.InvariantCulture) ?? "",
                s.EndedAt is { } end ? (end - s.CreatedAt).TotalMinutes.ToString("0.#", CultureInfo.InvariantCulture) : "",
                s.Purpose);
        }
        return csv.ToString();
    }

    private static string Num(int value) => value.ToString(CultureInfo.InvariantCulture);
}
