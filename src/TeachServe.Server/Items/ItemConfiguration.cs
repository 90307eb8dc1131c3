using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Items;

public sealed class ItemConfiguration : IEntityTypeConfiguration<Item>
{
    public void Configure(EntityTypeBuilder<Item> builder)
    {
        builder.ToTable("Items");
        builder.HasKey(i => new { i.ProjectId, i.ItemId });
        builder.Property(i => i.ProjectId).HasMaxLength(40);
        builder.Property(i => i.ItemId).HasMaxLength(ItemLimits.IdLength);
        builder.Property(i => i.Pool).HasMaxLength(8);
        builder.Property(i => i.Label).HasMaxLength(ProjectLimits.LabelLength);
        builder.Property(i => i.EmbeddingModel).HasMaxLength(ItemLimits.EmbeddingModelLength);
        builder.HasOne<Project>().WithMany().HasForeignKey(i => i.ProjectId).OnDelete(DeleteBehavior.Cascade);
    }
}
