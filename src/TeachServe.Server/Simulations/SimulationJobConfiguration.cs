using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Simulations;

public sealed class SimulationJobConfiguration : IEntityTypeConfiguration<SimulationJob>
{
    public void Configure(EntityTypeBuilder<SimulationJob> builder)
    {
        builder.ToTable("SimulationJobs");
        builder.HasKey(j => j.Id);
        builder.Property(j => j.Id).HasMaxLength(40);
        builder.Property(j => j.ProjectId).HasMaxLength(40);
        builder.Property(j => j.Status).HasMaxLength(16);
        builder.Property(j => j.Reason).HasMaxLength(500);
        builder.Property(j => j.NodeId).HasMaxLength(40);
        builder.HasIndex(j => new { j.ProjectId, j.Id });
        builder.HasIndex(j => j.Status);
        builder.HasOne<Project>().WithMany().HasForeignKey(j => j.ProjectId).OnDelete(DeleteBehavior.Cascade);
    }
}
