using TeachServe.Server.Sessions;

namespace TeachServe.Server.Auth;

/// <summary>
/// The session row that this request's token check read, carried in the request's features from the key check to
/// the session operations, which use it instead of reading the row a second time. Set only for a session token.
/// </summary>
public sealed class SessionRowFeature(Session row)
{
    public Session Row { get; } = row;

    /// <summary>The row read by this request's token check, if it was a session token's.</summary>
    public static Session? Of(HttpContext http) => http.Features.Get<SessionRowFeature>()?.Row;
}
