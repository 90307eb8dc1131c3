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
        builder.HasIndex(v => new { v.ProjectId, v.Status, v.Number });
        builder.HasOne<Project>().WithMany().HasForeignKey(v => v.ProjectId).OnDelete(DeleteBehavior.Cascade);
    }
}
