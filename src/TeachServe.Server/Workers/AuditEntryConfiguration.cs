using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Workers;

public sealed class AuditEntryConfiguration : IEntityTypeConfiguration<AuditEntry>
{
    public void Configure(EntityTypeBuilder<AuditEntry> builder)
    {
        builder.ToTable("Audit");
        builder.HasKey(a => a.Id);
        builder.Property(a => a.ProjectId).HasMaxLength(40);
        builder.Property(a => a.Action).HasMaxLength(32);
        builder.Property(a => a.SubjectHash).HasMaxLength(64);
        builder.HasIndex(a => new { a.ProjectId, a.Id });
        builder.HasOne<Project>().WithMany().HasForeignKey(a => a.ProjectId).OnDelete(DeleteBehavior.Cascade);
    }
}
