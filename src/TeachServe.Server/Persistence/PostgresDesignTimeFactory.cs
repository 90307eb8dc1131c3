using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Design;

namespace TeachServe.Server.Persistence;

/// <summary>
/// Lets <c>dotnet ef migrations add X --context PostgresTeachServeDb</c> build the model without a server;
/// generating a migration never connects, so the connection string only has to parse.
/// </summary>
public sealed class PostgresDesignTimeFactory : IDesignTimeDbContextFactory<PostgresTeachServeDb>
{
    public PostgresTeachServeDb CreateDbContext(string[] args) =>
        new(new DbContextOptionsBuilder<PostgresTeachServeDb>().UseNpgsql("Host=127.0.0.1;Database=teachserve_design").Options);
}
