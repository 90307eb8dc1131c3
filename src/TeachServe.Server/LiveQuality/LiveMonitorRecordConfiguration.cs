using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Projects;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.LiveQuality;

public sealed class LiveMonitorRecordConfiguration : IEntityTypeConfiguration<LiveMonitorRecord>
{
    public void Configure(EntityTypeBuilder<LiveMonitorRecord> builder)
    {
        builder.ToTable("LiveMonitors");
        builder.HasKey(m => new { m.ProjectId, m.WorkerRef });
        builder.Property(m => m.ProjectId).HasMaxLength(40);
        builder.Property(m => m.WorkerRef).HasMaxLength(SessionLimits.WorkerRefLength);
        builder.Property(m => m.SessionId).HasMaxLength(40);
        builder.Property(m => m.State).HasMaxLength(LiveQualityLimits.StateBytes);
        builder.Property(m => m.Status).HasMaxLength(16);
        builder.Property(m => m.LastAlarm).HasMaxLength(40);
        builder.Property(m => m.Revision).IsConcurrencyToken();
        builder.HasOne<Project>().WithMany().HasForeignKey(m => m.ProjectId).OnDelete(DeleteBehavior.Cascade);
    }
}
