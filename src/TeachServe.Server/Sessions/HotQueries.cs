using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Sessions;

/// <summary>
/// The read every annotator request makes. On SQLite through <see cref="SqliteSessionReader"/> (prepared, pooled);
/// otherwise as an EF compiled query: the LINQ expression is translated once instead of being parsed, hashed and
/// looked up in the query cache on every call. A compiled query keeps the first context's provider.
/// </summary>
public static class HotQueries
{
    private static readonly Func<PostgresTeachServeDb, string, CancellationToken, Task<Session?>> PostgresSession =
        EF.CompileAsyncQuery((PostgresTeachServeDb db, string id, CancellationToken ct) => db.Sessions.AsNoTracking().FirstOrDefault(s => s.Id == id));

    /// <summary>The session row, untracked.</summary>
    public static Task<Session?> SessionAsync(TeachServeDb db, SqliteSessionReader sqliteReader, string id, CancellationToken ct) => db switch
    {
        SqliteTeachServeDb => Task.FromResult(sqliteReader.Read(id)),
        PostgresTeachServeDb postgres => PostgresSession(postgres, id, ct),
        _ => db.Sessions.AsNoTracking().FirstOrDefaultAsync(s => s.Id == id, ct),
    };
}
