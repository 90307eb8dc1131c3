using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Experiments;

public sealed class ExperimentConfiguration : IEntityTypeConfiguration<Experiment>
{
    public void Configure(EntityTypeBuilder<Experiment> builder)
    {
        builder.ToTable("Experiments");
        builder.HasKey(e => e.Id);
        builder.Property(e => e.Id).HasMaxLength(40);
        builder.Property(e => e.ProjectId).HasMaxLength(40);
        builder.Property(e => e.Name).HasMaxLength(ExperimentLimits.NameLength);
        builder.Property(e => e.Status).HasMaxLength(16);
        builder.HasIndex(e => new { e.ProjectId, e.Id });
        // The database, not only the code, guarantees at most one running experiment per project.
        builder.HasIndex(e => e.ProjectId).IsUnique().HasFilter("\"Status\" = 'running'")
            .HasDatabaseName("IX_Experiments_ProjectId_Running");
        builder.HasOne<Project>().WithMany().HasForeignKey(e => e.ProjectId).OnDelete(DeleteBehavior.Cascade);
    }
}

public static class ExperimentLimits
{
    public const int NameLength = 200;
}
