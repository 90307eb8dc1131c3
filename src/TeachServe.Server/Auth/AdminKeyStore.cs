namespace TeachServe.Server.Auth;

/// <summary>Holds the hash of the admin key once startup has resolved it (configured, stored or generated).</summary>
public sealed class AdminKeyStore
{
    private byte[]? _hash;

    public void Set(byte[] hash) => Volatile.Write(ref _hash, hash);

    public bool Matches(string key) => Volatile.Read(ref _hash) is { } hash && ApiKeys.Matches(key, hash);
}
