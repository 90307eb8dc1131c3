using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Sessions;

/// <summary>
/// The reads every annotator request makes, as EF compiled queries: the LINQ expression is translated once
/// instead of being parsed, hashed and looked up in the query cache on every call (a large part of a request's
/// CPU under load). A compiled query keeps the first context's provider, so each provider has its own.
/// </summary>
public static class HotQueries
{
    private static readonly Func<SqliteTeachServeDb, string, CancellationToken, Task<Session?>> SqliteSession =
        EF.CompileAsyncQuery((SqliteTeachServeDb db, string id, CancellationToken ct) => db.Sessions.AsNoTracking().FirstOrDefault(s => s.Id == id));
    private static readonly Func<PostgresTeachServeDb, string, CancellationToken, Task<Session?>> PostgresSession =
        EF.CompileAsyncQuery((PostgresTeachServeDb db, string id, CancellationToken ct) => db.Sessions.AsNoTracking().FirstOrDefault(s => s.Id == id));

    /// <summary>The session row, untracked.</summary>
    public static Task<Session?> SessionAsync(TeachServeDb db, string id, CancellationToken ct) => db switch
    {
        SqliteTeachServeDb sqlite => SqliteSession(sqlite, id, ct),
        PostgresTeachServeDb postgres => PostgresSession(postgres, id, ct),
        _ => db.Sessions.AsNoTracking().FirstOrDefaultAsync(s => s.Id == id, ct),
    };
}
