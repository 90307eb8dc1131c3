using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using TeachServe.Server.Sessions;

namespace TeachServe.Server.Annotate;

public sealed class LaunchCodeConfiguration : IEntityTypeConfiguration<LaunchCode>
{
    public void Configure(EntityTypeBuilder<LaunchCode> builder)
    {
        builder.ToTable("LaunchCodes");
        builder.HasKey(c => c.CodeHash);
        builder.Property(c => c.CodeHash).HasMaxLength(32);
        builder.Property(c => c.SessionId).HasMaxLength(40);
        builder.Property(c => c.SealedToken).HasMaxLength(512);
        builder.HasIndex(c => c.SessionId);
        builder.HasIndex(c => c.ExpiresAt);
        // Erasing a worker's sessions takes their launch codes with them.
        builder.HasOne<Session>().WithMany().HasForeignKey(c => c.SessionId).OnDelete(DeleteBehavior.Cascade);
    }
}
