namespace TeachServe.Server.Auth;

public enum KeyRole
{
    Admin,
    Owner,
    Embed,
    Session,
}

/// <summary>Claim types of an authenticated key.</summary>
public static class KeyClaims
{
    public const string Role = "ts:role";
    public const string Project = "ts:project";
    public const string Session = "ts:session";
    /// <summary>Stable identity of the key for rate limiting (never the key itself).</summary>
    public const string KeyId = "ts:key";
}
