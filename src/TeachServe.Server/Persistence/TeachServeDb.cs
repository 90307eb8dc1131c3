using Microsoft.AspNetCore.DataProtection.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore;
using TeachServe.Server.Events;
using TeachServe.Server.Items;
using TeachServe.Server.Projects;
using TeachServe.Server.Releases;
using TeachServe.Server.Sessions;
using TeachServe.Server.Versions;
using TeachServe.Server.Webhooks;
using TeachServe.Server.Workers;

namespace TeachServe.Server.Persistence;

/// <summary>
/// The server's database. Each provider has a small subclass that owns its migrations
/// (<see cref="SqliteTeachServeDb"/>; PostgreSQL gets its own), so the model is written once.
/// It also holds the key ring of ASP.NET Core data protection (console cookies, form tokens), so every node
/// reads the same keys.
/// </summary>
public abstract class TeachServeDb(DbContextOptions options) : DbContext(options), IDataProtectionKeyContext
{
    public DbSet<Project> Projects => Set<Project>();
    public DbSet<Item> Items => Set<Item>();
    public DbSet<ModelVersionRecord> ModelVersions => Set<ModelVersionRecord>();
    public DbSet<Session> Sessions => Set<Session>();
    public DbSet<SessionEvent> Events => Set<SessionEvent>();
    public DbSet<Release> Releases => Set<Release>();
    public DbSet<OutboxMessage> Outbox => Set<OutboxMessage>();
    public DbSet<AuditEntry> Audit => Set<AuditEntry>();
    public DbSet<ServerSetting> ServerSettings => Set<ServerSetting>();
    public DbSet<DataProtectionKey> DataProtectionKeys => Set<DataProtectionKey>();
    public DbSet<Exposure.TestExposure> TestExposures => Set<Exposure.TestExposure>();
    public DbSet<LiveQuality.LiveCheckRecord> LiveChecks => Set<LiveQuality.LiveCheckRecord>();
    public DbSet<LiveQuality.LiveMonitorRecord> LiveMonitors => Set<LiveQuality.LiveMonitorRecord>();
    public DbSet<LiveQuality.RefresherStart> RefresherStarts => Set<LiveQuality.RefresherStart>();

    protected override void OnModelCreating(ModelBuilder modelBuilder) =>
        modelBuilder.ApplyConfigurationsFromAssembly(typeof(TeachServeDb).Assembly);
}
