using TeachServe.Server.Persistence;

namespace TeachServe.Server.Sessions;

/// <summary>
/// The session row the token check of this request read (scoped to the request). The annotator endpoints use
/// it instead of reading the row a second time; <see cref="RowAsync"/> says when it is still good.
/// </summary>
public sealed class AuthenticatedSession(SqliteRowReader<Session> sqliteReader)
{
    public Session? Row { get; set; }

    /// <summary>
    /// The session's row for a request holding the session's lock. The row read by the token check is used
    /// unless this node has committed a later step since (a concurrent request of the same session, e.g. a retry,
    /// finished first): then it is read again. A later step written by another node is caught as before by the
    /// optimistic step check of the write.
    /// </summary>
    public async Task<Session?> RowAsync(TeachServeDb db, SessionStateCache states, string sessionId, CancellationToken ct)
    {
        if (Row is { } row && string.Equals(row.Id, sessionId, StringComparison.Ordinal) && !states.HasLaterStep(sessionId, row.Step))
            return row;
        return await HotQueries.SessionAsync(db, sqliteReader, sessionId, ct);
    }
}
