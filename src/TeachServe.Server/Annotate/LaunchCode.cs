namespace TeachServe.Server.Annotate;

/// <summary>
/// A one-time, short-lived code in an annotator's launch link, exchanged once by the page for the session token.
/// Only its SHA-256 is stored; the token is stored sealed (AES-GCM) under a key derived from the code, so neither the
/// database nor the link alone gives the token away, and the token the platform received stays the same.
/// </summary>
public sealed class LaunchCode
{
    public required byte[] CodeHash { get; set; }
    public required string SessionId { get; set; }
    /// <summary>Nonce (12 bytes), tag (16 bytes), then the encrypted token.</summary>
    public required byte[] SealedToken { get; set; }
    public DateTimeOffset ExpiresAt { get; set; }
}
