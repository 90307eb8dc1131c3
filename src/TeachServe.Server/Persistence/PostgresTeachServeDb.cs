using Microsoft.EntityFrameworkCore;

namespace TeachServe.Server.Persistence;

/// <summary>The PostgreSQL flavour of <see cref="TeachServeDb"/>; its migrations arrive with multi-node support.</summary>
public sealed class PostgresTeachServeDb(DbContextOptions<PostgresTeachServeDb> options) : TeachServeDb(options);
