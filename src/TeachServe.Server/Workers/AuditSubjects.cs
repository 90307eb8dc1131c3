using System.Security.Cryptography;
using System.Text;

namespace TeachServe.Server.Workers;

/// <summary>
/// Names a worker in the audit log by HMAC-SHA256 over project id and workerRef, keyed by a server secret
/// (<c>TeachServe:AuditKey</c>, or generated on first start and kept in the <c>ServerSettings</c> table). A plain
/// hash of guessable refs (an email address, a numeric platform id) could be reversed by hashing candidates; the
/// keyed one cannot without the key, and the same worker still gets the same subject on one server, so erasures
/// of one person can be matched up. The project id in the message keeps subjects unlinkable across projects.
/// </summary>
public sealed class AuditSubjects
{
    public const string Setting = "audit-subject-key";
    private byte[]? _key;

    public void SetKey(byte[] key)
    {
        ArgumentNullException.ThrowIfNull(key);
        if (key.Length < 16) throw new ArgumentException("The audit key needs at least 16 bytes.", nameof(key));
        Volatile.Write(ref _key, key);
    }

    public string Of(string projectId, string workerRef)
    {
        var key = Volatile.Read(ref _key) ?? throw new InvalidOperationException("The audit key has not been settled yet.");
        return Convert.ToHexStringLower(HMACSHA256.HashData(key, Encoding.UTF8.GetBytes($"{projectId}\n{workerRef}")));
    }
}
