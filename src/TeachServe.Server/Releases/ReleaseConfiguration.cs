using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Releases;

public sealed class ReleaseConfiguration : IEntityTypeConfiguration<Release>
{
    public void Configure(EntityTypeBuilder<Release> builder)
    {
        builder.ToTable("Releases");
        builder.HasKey(r => r.Id);
        builder.Property(r => r.ProjectId).HasMaxLength(40);
        builder.Property(r => r.SessionId).HasMaxLength(40);
        builder.Property(r => r.WorkerRef).HasMaxLength(Sessions.SessionLimits.WorkerRefLength);
        builder.HasIndex(r => new { r.ProjectId, r.Id });
        builder.HasIndex(r => r.SessionId).IsUnique();
        builder.HasOne<Project>().WithMany().HasForeignKey(r => r.ProjectId).OnDelete(DeleteBehavior.Cascade);
    }
}
