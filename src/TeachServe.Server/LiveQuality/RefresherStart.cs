using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.LiveQuality;

/// <summary>
/// Where a refresher session starts: the belief its annotator's live record gave when it was started (one weight per
/// hypothesis of the session's model version, little-endian doubles). Kept apart from the session row, which every
/// request of the session reads, and read only when the session is replayed.
/// </summary>
public sealed class RefresherStart
{
    public required string SessionId { get; set; }
    public required string ProjectId { get; set; }
    public required string WorkerRef { get; set; }
    /// <summary>The ended session (onboarding or an earlier refresher) whose final belief the live record continued.</summary>
    public required string FromSessionId { get; set; }
    /// <summary>Live checks on the model version's items that moved the belief since that session.</summary>
    public int LiveChecks { get; set; }
    /// <summary>At most this many teaching items.</summary>
    public int MaxItems { get; set; }
    public required byte[] Weights { get; set; }
    public DateTimeOffset CreatedAt { get; set; }
    /// <summary>When the annotator's live monitor took in how the refresher ended; null until then.</summary>
    public DateTimeOffset? AppliedAt { get; set; }

    public static byte[] Pack(ReadOnlySpan<double> weights)
    {
        var bytes = new byte[weights.Length * sizeof(double)];
        for (var h = 0; h < weights.Length; h++)
            System.Buffers.Binary.BinaryPrimitives.WriteDoubleLittleEndian(bytes.AsSpan(h * sizeof(double)), weights[h]);
        return bytes;
    }

    public static double[] Unpack(byte[] bytes)
    {
        var weights = new double[bytes.Length / sizeof(double)];
        for (var h = 0; h < weights.Length; h++)
            weights[h] = System.Buffers.Binary.BinaryPrimitives.ReadDoubleLittleEndian(bytes.AsSpan(h * sizeof(double)));
        return weights;
    }
}

public sealed class RefresherStartConfiguration : IEntityTypeConfiguration<RefresherStart>
{
    public void Configure(EntityTypeBuilder<RefresherStart> builder)
    {
        builder.ToTable("RefresherStarts");
        builder.HasKey(r => r.SessionId);
        builder.Property(r => r.SessionId).HasMaxLength(40);
        builder.Property(r => r.ProjectId).HasMaxLength(40);
        builder.Property(r => r.WorkerRef).HasMaxLength(SessionLimits.WorkerRefLength);
        builder.Property(r => r.FromSessionId).HasMaxLength(40);
        builder.HasIndex(r => new { r.ProjectId, r.WorkerRef, r.AppliedAt });
        builder.HasOne<Session>().WithOne().HasForeignKey<RefresherStart>(r => r.SessionId).OnDelete(DeleteBehavior.Cascade);
    }
}
