using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Sessions;

public sealed class SessionConfiguration : IEntityTypeConfiguration<Session>
{
    public void Configure(EntityTypeBuilder<Session> builder)
    {
        builder.ToTable("Sessions");
        builder.HasKey(s => s.Id);
        builder.Property(s => s.Id).HasMaxLength(40);
        builder.Property(s => s.ProjectId).HasMaxLength(40);
        builder.Property(s => s.WorkerRef).HasMaxLength(SessionLimits.WorkerRefLength);
        builder.Property(s => s.Phase).HasMaxLength(16);
        builder.Property(s => s.Policy).HasMaxLength(32);
        builder.Property(s => s.Purpose).HasMaxLength(16).HasDefaultValue(SessionPurposes.Onboarding);
        builder.Property(s => s.Step).IsConcurrencyToken();
        builder.Property(s => s.TokenHash).HasMaxLength(32);
        builder.Property(s => s.RefKey).HasMaxLength(32);
        // The database, not only the code, guarantees one active session per worker.
        builder.HasIndex(s => new { s.ProjectId, s.WorkerRef }).IsUnique().HasFilter("\"IsActive\"");
        builder.HasIndex(s => new { s.ProjectId, s.WorkerRef, s.Id });
        builder.HasIndex(s => new { s.ProjectId, s.Phase, s.Id });
        builder.Property(s => s.ExperimentId).HasMaxLength(40);
        builder.HasIndex(s => new { s.ExperimentId, s.Id });
        builder.HasOne<Project>().WithMany().HasForeignKey(s => s.ProjectId).OnDelete(DeleteBehavior.Cascade);
    }
}
