using System.Security.Claims;
using System.Text.Encodings.Web;
using Microsoft.AspNetCore.Authentication;
using Microsoft.AspNetCore.Mvc;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;
using TeachServe.Server.Sessions.Store;

namespace TeachServe.Server.Auth;

/// <summary><c>Authorization: Bearer &lt;key&gt;</c> for all four kinds of key; challenges answer 401 problem details.</summary>
public sealed class KeyAuthenticationHandler(
    IOptionsMonitor<AuthenticationSchemeOptions> options,
    ILoggerFactory logger,
    UrlEncoder encoder,
    KeyResolver resolver,
    IProblemDetailsService problems) : AuthenticationHandler<AuthenticationSchemeOptions>(options, logger, encoder)
{
    public const string SchemeName = "TeachServeKey";

    protected override async Task<AuthenticateResult> HandleAuthenticateAsync()
    {
        string? header = Request.Headers.Authorization;
        if (string.IsNullOrEmpty(header)) return AuthenticateResult.NoResult();
        if (!header.StartsWith("Bearer ", StringComparison.OrdinalIgnoreCase))
            return AuthenticateResult.Fail("Use 'Authorization: Bearer <key>'.");
        var check = await resolver.CheckAsync(header["Bearer ".Length..].Trim(), Context.RequestAborted);
        if (check.SessionRow is { } row) Context.Features.Set(new SessionRowFeature(row));
        return check.Principal is { } principal
            ? AuthenticateResult.Success(new AuthenticationTicket(principal, SchemeName))
            : AuthenticateResult.Fail(check.Failure!);
    }

    protected override async Task HandleChallengeAsync(AuthenticationProperties properties)
    {
        var result = await HandleAuthenticateOnceSafeAsync();
        Response.StatusCode = StatusCodes.Status401Unauthorized;
        Response.Headers.WWWAuthenticate = "Bearer";
        await problems.WriteAsync(new ProblemDetailsContext
        {
            HttpContext = Context,
            ProblemDetails = new ProblemDetails
            {
                Status = StatusCodes.Status401Unauthorized,
                Title = "Unauthorized",
                Detail = result.Failure?.Message ?? "This request needs 'Authorization: Bearer <key>'.",
            },
        });
    }
}

/// <summary>Turns a presented bearer key into a principal, or says why it cannot.</summary>
public sealed class KeyResolver(
    TeachServeDb db, AdminKeyStore admin, TimeProvider time, IOptions<TeachServeOptions> options, SessionReads reads)
{
    /// <summary>A session's last-seen time is written at most this often by reads (answers always write it).</summary>
    private static readonly TimeSpan TouchInterval = TimeSpan.FromMinutes(1);

    public async Task<KeyCheck> CheckAsync(string key, CancellationToken ct)
    {
        // A configured admin key may have any form (TeachServeOptionsValidator.AdminKeyFormIsValid), so a key that is
        // not shaped like a generated one is compared with the admin key's hash before it is refused.
        if (!ApiKeys.TryParse(key, out var prefix, out var id))
            return admin.Matches(key) ? KeyCheck.Ok(Principal(KeyRole.Admin, null, null, "admin")) : KeyCheck.Invalid;
        switch (prefix)
        {
            case ApiKeys.AdminPrefix:
                return admin.Matches(key) ? KeyCheck.Ok(Principal(KeyRole.Admin, null, null, "admin")) : KeyCheck.Invalid;

            case ApiKeys.OwnerPrefix or ApiKeys.EmbedPrefix:
            {
                if (!Ids.LooksLike(id, "prj_")) return KeyCheck.Invalid;
                var hashes = await reads.ProjectKeysAsync(db, id!, ct);
                if (hashes is null) return KeyCheck.Invalid;
                var owner = prefix == ApiKeys.OwnerPrefix;
                return ApiKeys.Matches(key, owner ? hashes.OwnerKeyHash : hashes.EmbedKeyHash)
                    ? KeyCheck.Ok(Principal(owner ? KeyRole.Owner : KeyRole.Embed, id, null, $"{prefix}:{id}"))
                    : KeyCheck.Invalid;
            }

            default:
            {
                if (!Ids.LooksLike(id, "ses_")) return KeyCheck.Invalid;
                var s = await reads.SessionAsync(db, id!, ct);
                if (s is null || !ApiKeys.Matches(key, s.TokenHash)) return KeyCheck.Invalid;
                var now = time.GetUtcNow();
                if (now - s.LastSeenAt > options.Value.SessionIdleTimeout) return KeyCheck.Expired;
                if (now - s.LastSeenAt > TouchInterval)
                    await db.Sessions.Where(x => x.Id == id).ExecuteUpdateAsync(u => u.SetProperty(x => x.LastSeenAt, now), ct);
                // The whole row is read (one query instead of two per annotator request); the endpoint reuses it.
                return KeyCheck.Ok(Principal(KeyRole.Session, s.ProjectId, id, $"{prefix}:{id}"), s);
            }
        }
    }

    private static ClaimsPrincipal Principal(KeyRole role, string? projectId, string? sessionId, string keyId)
    {
        var claims = new List<Claim> { new(KeyClaims.Role, role.ToString()), new(KeyClaims.KeyId, keyId) };
        if (projectId is not null) claims.Add(new Claim(KeyClaims.Project, projectId));
        if (sessionId is not null) claims.Add(new Claim(KeyClaims.Session, sessionId));
        return new ClaimsPrincipal(new ClaimsIdentity(claims, KeyAuthenticationHandler.SchemeName, KeyClaims.KeyId, KeyClaims.Role));
    }
}

/// <summary>The outcome of a key check; for a session token also the session row it read.</summary>
public sealed record KeyCheck(ClaimsPrincipal? Principal, string? Failure, Session? SessionRow = null)
{
    public static readonly KeyCheck Invalid = new(null, "The key is not valid.");
    public static readonly KeyCheck Expired = new(null, "The session token has expired after being idle; ask the platform for a new link.");
    public static KeyCheck Ok(ClaimsPrincipal principal, Session? sessionRow = null) => new(principal, null, sessionRow);
}

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
