using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Design;

namespace TeachServe.Server.Persistence;

/// <summary>Lets <c>dotnet ef migrations add X --context SqliteTeachServeDb</c> build the model without starting the server.</summary>
public sealed class SqliteDesignTimeFactory : IDesignTimeDbContextFactory<SqliteTeachServeDb>
{
    public SqliteTeachServeDb CreateDbContext(string[] args) =>
        new(new DbContextOptionsBuilder<SqliteTeachServeDb>().UseSqlite("Data Source=design-time.db").Options);
}
