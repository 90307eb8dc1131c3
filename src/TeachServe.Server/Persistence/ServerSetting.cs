namespace TeachServe.Server.Persistence;

/// <summary>A server-wide value, e.g. the hash of a generated admin key.</summary>
public sealed class ServerSetting
{
    public required string Key { get; set; }
    public required string Value { get; set; }
}
