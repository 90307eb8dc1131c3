using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Storage.ValueConversion;

namespace TeachServe.Server.Persistence;

/// <summary>The SQLite flavour of <see cref="TeachServeDb"/>; its migrations live in <c>Persistence/Migrations/Sqlite</c>.</summary>
public sealed class SqliteTeachServeDb(DbContextOptions<SqliteTeachServeDb> options) : TeachServeDb(options)
{
    protected override void ConfigureConventions(ModelConfigurationBuilder configurationBuilder)
    {
        // SQLite has no date type; as 64-bit numbers, times can be compared and ordered in SQL.
        configurationBuilder.Properties<DateTimeOffset>().HaveConversion<DateTimeOffsetToBinaryConverter>();
    }
}
