using System.Data.Common;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Persistence;

namespace TeachServe.Server.Sessions.Store;

/// <summary>
/// A database connection kept open for one long-lived user (the single writer, a pooled hot read), with the
/// context that owns it. Opened through EF so the connection interceptors (SQLite's pragmas) run; EF leaves a
/// connection it did not open itself open until the context goes.
/// </summary>
public sealed class DedicatedConnection : IDisposable
{
    private readonly IServiceScope _scope;

    public DedicatedConnection(IServiceScopeFactory scopes)
    {
        _scope = scopes.CreateScope();
        try
        {
            Db = _scope.ServiceProvider.GetRequiredService<TeachServeDb>();
            Db.Database.OpenConnection();
            Connection = Db.Database.GetDbConnection();
        }
        catch
        {
            _scope.Dispose();
            throw;
        }
    }

    public TeachServeDb Db { get; }
    public DbConnection Connection { get; }

    public void Dispose() => _scope.Dispose();
}
