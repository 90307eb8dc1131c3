using System.Buffers.Text;
using System.Security.Cryptography;
using System.Text;
using Microsoft.AspNetCore.Http.HttpResults;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Annotate;

/// <summary>
/// Launch links carry a one-time code in the URL fragment (<c>/annotate/{sessionId}#code=…</c>): fragments are never
/// sent to a server, so the code stays out of access logs and <c>Referer</c> headers, and the session token never
/// appears in a URL at all. The page trades the code for the token with one POST and keeps the token in sessionStorage.
/// </summary>
public static class LaunchCodes
{
    public const string Prefix = "tsl_";
    private const int NonceBytes = 12;
    private const int TagBytes = 16;

    /// <summary>Adds a new code for the session's current token to the context (the caller saves) and returns the launch URL.</summary>
    public static string Issue(TeachServeDb db, TimeProvider time, string baseUrl, string sessionId, string token, TimeSpan lifetime)
    {
        var (url, row) = New(time, baseUrl, sessionId, token, lifetime);
        db.Set<LaunchCode>().Add(row);
        return url;
    }

    /// <summary>A new code for the session's current token, as a row to store and the launch URL that carries it.</summary>
    public static (string Url, LaunchCode Row) New(TimeProvider time, string baseUrl, string sessionId, string token, TimeSpan lifetime)
    {
        var code = Prefix + Base64Url.EncodeToString(RandomNumberGenerator.GetBytes(32));
        var row = new LaunchCode
        {
            CodeHash = Hash(code),
            SessionId = sessionId,
            SealedToken = Seal(code, token),
            ExpiresAt = time.GetUtcNow() + lifetime,
        };
        return ($"{baseUrl}/annotate/{sessionId}#code={code}", row);
    }

    /// <summary>Drops the session's earlier codes (they seal a token that is being replaced) and every expired code.</summary>
    public static async Task ForgetAsync(TeachServeDb db, TimeProvider time, string sessionId, CancellationToken ct)
    {
        var now = time.GetUtcNow();
        await db.Set<LaunchCode>().Where(c => c.SessionId == sessionId || c.ExpiresAt < now).ExecuteDeleteAsync(ct);
    }

    /// <summary>Exchanges a code once: the row is deleted by the exchange that wins, so a second use finds nothing.</summary>
    /// <returns>The session and its token, or 410 when the code is unknown, used, expired or malformed.</returns>
    public static async Task<Outcome<LaunchExchanged>> RedeemAsync(TeachServeDb db, TimeProvider time, string code, CancellationToken ct)
    {
        if (code.Length is < 10 or > 100 || !code.StartsWith(Prefix, StringComparison.Ordinal)) return Gone();
        var hash = Hash(code);
        var row = await db.Set<LaunchCode>().AsNoTracking().FirstOrDefaultAsync(c => c.CodeHash == hash, ct);
        if (row is null) return Gone();
        var deleted = await db.Set<LaunchCode>().Where(c => c.CodeHash == hash).ExecuteDeleteAsync(ct);
        if (deleted == 0 || row.ExpiresAt < time.GetUtcNow()) return Gone();
        return new LaunchExchanged(row.SessionId, Unseal(code, row.SealedToken));
    }

    private static ProblemHttpResult Gone() =>
        Problems.Of(StatusCodes.Status410Gone, "Launch link used or expired",
            "This launch link has already been used, has expired, or is incomplete. Ask the platform for a new link.");

    private static byte[] Hash(string code) => SHA256.HashData(Encoding.ASCII.GetBytes(code));

    /// <summary>The code carries 256 random bits, so one SHA-256 under a distinct label is a sufficient key derivation.</summary>
    private static byte[] Key(string code) => SHA256.HashData(Encoding.ASCII.GetBytes("teachserve launch-code seal v1\n" + code));

    private static byte[] Seal(string code, string token)
    {
        var plain = Encoding.UTF8.GetBytes(token);
        var sealedToken = new byte[NonceBytes + TagBytes + plain.Length];
        var nonce = sealedToken.AsSpan(0, NonceBytes);
        RandomNumberGenerator.Fill(nonce);
        using var aes = new AesGcm(Key(code), TagBytes);
        aes.Encrypt(nonce, plain, sealedToken.AsSpan(NonceBytes + TagBytes), sealedToken.AsSpan(NonceBytes, TagBytes));
        return sealedToken;
    }

    private static string Unseal(string code, byte[] sealedToken)
    {
        var plain = new byte[sealedToken.Length - NonceBytes - TagBytes];
        using var aes = new AesGcm(Key(code), TagBytes);
        aes.Decrypt(sealedToken.AsSpan(0, NonceBytes), sealedToken.AsSpan(NonceBytes + TagBytes), sealedToken.AsSpan(NonceBytes, TagBytes), plain);
        return Encoding.UTF8.GetString(plain);
    }
}
