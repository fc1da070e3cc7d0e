using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using Runfold.Server.Data.Entities;

namespace Runfold.Server.Sharing;

/// <summary>A share link of a study. The link's token is signed (ASP.NET Data Protection) and names this row;
/// the row decides whether the link still works: until <see cref="ExpiresAt"/>, unless revoked.</summary>
public sealed class ShareLink
{
    public int Id { get; set; }

    public int StudyId { get; set; }

    /// <summary>Whom the lead sent it to, shown to leads only.</summary>
    public string? Note { get; set; }

    public Guid CreatedById { get; set; }

    public DateTimeOffset CreatedAt { get; set; }

    public DateTimeOffset ExpiresAt { get; set; }

    public DateTimeOffset? RevokedAt { get; set; }

    public Guid? RevokedById { get; set; }
}

internal sealed class ShareLinkConfiguration : IEntityTypeConfiguration<ShareLink>
{
    public void Configure(EntityTypeBuilder<ShareLink> builder)
    {
        builder.ToTable("share_links");
        builder.Property(l => l.Note).HasMaxLength(ShareLinkService.MaxNoteLength);
        builder.HasIndex(l => l.StudyId);
        builder.HasOne<Study>().WithMany().HasForeignKey(l => l.StudyId).OnDelete(DeleteBehavior.Cascade);
        builder.HasOne<RunfoldUser>().WithMany().HasForeignKey(l => l.CreatedById).OnDelete(DeleteBehavior.Restrict);
        builder.HasOne<RunfoldUser>().WithMany().HasForeignKey(l => l.RevokedById).OnDelete(DeleteBehavior.Restrict);
    }
}
