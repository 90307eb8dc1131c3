using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Events;

public sealed class SessionEventConfiguration : IEntityTypeConfiguration<SessionEvent>
{
    public void Configure(EntityTypeBuilder<SessionEvent> builder)
    {
        builder.ToTable("Events");
        builder.HasKey(e => e.Id);
        builder.Property(e => e.ProjectId).HasMaxLength(40);
        builder.Property(e => e.SessionId).HasMaxLength(40);
        builder.Property(e => e.WorkerRef).HasMaxLength(Sessions.SessionLimits.WorkerRefLength);
        builder.Property(e => e.Type).HasMaxLength(32);
        builder.HasIndex(e => new { e.ProjectId, e.Id });
        // One event of each type per step: a second answer to the same step cannot be appended.
        builder.HasIndex(e => new { e.SessionId, e.Type, e.Step }).IsUnique();
        builder.HasIndex(e => new { e.ProjectId, e.WorkerRef });
        builder.HasOne<Project>().WithMany().HasForeignKey(e => e.ProjectId).OnDelete(DeleteBehavior.Cascade);
    }
}
