using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Items;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Exposure;

public sealed class TestExposureConfiguration : IEntityTypeConfiguration<TestExposure>
{
    public void Configure(EntityTypeBuilder<TestExposure> builder)
    {
        builder.ToTable("TestExposures");
        builder.HasKey(e => new { e.ProjectId, e.ItemId });
        builder.Property(e => e.ProjectId).HasMaxLength(40);
        builder.Property(e => e.ItemId).HasMaxLength(ItemLimits.IdLength);
        builder.HasOne<Project>().WithMany().HasForeignKey(e => e.ProjectId).OnDelete(DeleteBehavior.Cascade);
    }
}
