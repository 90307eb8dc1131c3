using System.Security.Cryptography;
using Microsoft.AspNetCore.DataProtection;

namespace TeachServe.Server.Webhooks;

/// <summary>
/// Webhook secrets are stored encrypted with the data-protection key ring (the one the console's cookies use,
/// kept in the database so every node can decrypt what another wrote), as <c>dp1:</c> and the protected payload.
/// A stored value without the prefix is a plaintext secret written before encryption: it is still read as it is,
/// and <see cref="WebhookSecretsAtRest"/> encrypts such rows at start.
/// </summary>
/// <remarks>
/// What this protects: a secret copied out of the <c>Projects</c> table alone (a partial dump, an export, a log
/// of a query) is useless without the key ring. What it does not: whoever can read the whole database can read
/// the key ring too (SECURITY.md).
/// </remarks>
public sealed class WebhookSecrets(IDataProtectionProvider protection)
{
    public const string Prefix = "dp1:";
    private readonly IDataProtector _protector = protection.CreateProtector("TeachServe.Webhooks.Secret.v1");

    public static bool IsProtected(string? stored) => stored is not null && stored.StartsWith(Prefix, StringComparison.Ordinal);

    /// <summary>The value to store for a secret (null stays null).</summary>
    public string? Protect(string? secret) => secret is null ? null : Prefix + _protector.Protect(secret);

    /// <summary>The secret in clear; a legacy plaintext value is returned as it is.</summary>
    /// <exception cref="CryptographicException">The key that protected it is no longer in the key ring.</exception>
    public string? Reveal(string? stored) =>
        IsProtected(stored) ? _protector.Unprotect(stored![Prefix.Length..]) : stored;
}
