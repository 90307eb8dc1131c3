using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;

namespace TeachServe.Server.Projects;

public sealed class ProjectConfiguration : IEntityTypeConfiguration<Project>
{
    public void Configure(EntityTypeBuilder<Project> builder)
    {
        builder.ToTable("Projects");
        builder.HasKey(p => p.Id);
        builder.Property(p => p.Id).HasMaxLength(40);
        builder.Property(p => p.Name).HasMaxLength(ProjectLimits.NameLength);
        builder.Property(p => p.SettingsJson);
        builder.Property(p => p.OwnerKeyHash).HasMaxLength(32);
        builder.Property(p => p.EmbedKeyHash).HasMaxLength(32);
        builder.Property(p => p.WebhookUrl).HasMaxLength(ProjectLimits.UrlLength);
        builder.Property(p => p.WebhookSecret).HasMaxLength(ProjectLimits.StoredSecretLength);
    }
}
