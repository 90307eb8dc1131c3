using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Items;
using TeachServe.Server.Projects;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.LiveQuality;

public sealed class LiveCheckRecordConfiguration : IEntityTypeConfiguration<LiveCheckRecord>
{
    public void Configure(EntityTypeBuilder<LiveCheckRecord> builder)
    {
        builder.ToTable("LiveChecks");
        builder.HasKey(c => c.Id);
        builder.Property(c => c.ProjectId).HasMaxLength(40);
        builder.Property(c => c.OutcomeId).HasMaxLength(LiveQualityLimits.OutcomeIdLength);
        builder.Property(c => c.WorkerRef).HasMaxLength(SessionLimits.WorkerRefLength);
        builder.Property(c => c.ItemId).HasMaxLength(ItemLimits.IdLength);
        builder.Property(c => c.Label).HasMaxLength(ProjectLimits.LabelLength);
        builder.Property(c => c.KnownLabel).HasMaxLength(ProjectLimits.LabelLength);
        // Retry safety: one outcome per id and project, whichever node or batch stores it first.
        builder.HasIndex(c => new { c.ProjectId, c.OutcomeId }).IsUnique();
        // The order in which a worker's outcomes are applied: answered time, then arrival.
        builder.HasIndex(c => new { c.ProjectId, c.WorkerRef, c.AnsweredAt, c.Id });
        builder.HasOne<Project>().WithMany().HasForeignKey(c => c.ProjectId).OnDelete(DeleteBehavior.Cascade);
    }
}
