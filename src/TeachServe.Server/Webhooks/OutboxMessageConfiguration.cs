using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Projects;

namespace TeachServe.Server.Webhooks;

public sealed class OutboxMessageConfiguration : IEntityTypeConfiguration<OutboxMessage>
{
    public void Configure(EntityTypeBuilder<OutboxMessage> builder)
    {
        builder.ToTable("Outbox");
        builder.HasKey(m => m.Id);
        builder.Property(m => m.ProjectId).HasMaxLength(40);
        builder.Property(m => m.SessionId).HasMaxLength(40);
        builder.Property(m => m.WorkerRef).HasMaxLength(Sessions.SessionLimits.WorkerRefLength);
        builder.Property(m => m.DeliveryId).HasMaxLength(40);
        builder.Property(m => m.EventType).HasMaxLength(32);
        builder.Property(m => m.Url).HasMaxLength(ProjectLimits.UrlLength);
        builder.Property(m => m.State).HasMaxLength(16);
        builder.Property(m => m.LastError).HasMaxLength(1000);
        builder.HasIndex(m => new { m.State, m.NextAttemptAt });
        builder.HasOne<Project>().WithMany().HasForeignKey(m => m.ProjectId).OnDelete(DeleteBehavior.Cascade);
    }
}
