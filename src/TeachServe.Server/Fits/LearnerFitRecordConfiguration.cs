using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Fits;

public sealed class LearnerFitRecordConfiguration : IEntityTypeConfiguration<LearnerFitRecord>
{
    public void Configure(EntityTypeBuilder<LearnerFitRecord> builder)
    {
        builder.ToTable("Fits");
        builder.HasKey(f => f.Id);
        builder.Property(f => f.Id).HasMaxLength(40);
        builder.Property(f => f.ProjectId).HasMaxLength(40);
        builder.HasIndex(f => new { f.ProjectId, f.Id });
        builder.HasOne<Project>().WithMany().HasForeignKey(f => f.ProjectId).OnDelete(DeleteBehavior.Cascade);
    }
}
