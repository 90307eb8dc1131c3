using System.Security.Claims;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;
using TeachServe.Server.Sessions.Store;

namespace TeachServe.Server.Auth;

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
