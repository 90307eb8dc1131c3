using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Versions;

public sealed class ModelVersionRecordConfiguration : IEntityTypeConfiguration<ModelVersionRecord>
{
    public void Configure(EntityTypeBuilder<ModelVersionRecord> builder)
    {
        builder.ToTable("ModelVersions");
        builder.HasKey(v => new { v.ProjectId, v.Number });
        builder.Property(v => v.ProjectId).HasMaxLength(40);
        builder.Property(v => v.Status).HasMaxLength(16);
        builder.Property(v => v.Error).HasMaxLength(4000);
        builder.Property(v => v.SnapshotHash).HasMaxLength(64);
        builder.HasIndex(v => new { v.ProjectId, v.Status, v.Number });
        builder.HasIndex(v => new { v.ProjectId, v.SnapshotHash });
        // At most one compile per project at a time, on every node: a second 'compiling' row is refused by the
        // database itself, which also settles the race for the next version number on both providers.
        builder.HasIndex(v => v.ProjectId).IsUnique().HasFilter($"\"Status\" = '{VersionStatuses.Compiling}'")
            .HasDatabaseName("IX_ModelVersions_OneCompilingPerProject");
        builder.HasOne<Project>().WithMany().HasForeignKey(v => v.ProjectId).OnDelete(DeleteBehavior.Cascade);
    }
}
