using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using Runfold.Server.Data.Entities;

namespace Runfold.Server.Data.Configurations;

internal sealed class RunfoldUserConfiguration : IEntityTypeConfiguration<RunfoldUser>
{
    public void Configure(EntityTypeBuilder<RunfoldUser> builder)
    {
        builder.Property(u => u.DisplayName).HasMaxLength(200);
    }
}

internal sealed class ApiTokenConfiguration : IEntityTypeConfiguration<ApiToken>
{
    public void Configure(EntityTypeBuilder<ApiToken> builder)
    {
        builder.ToTable("api_tokens");
        builder.Property(t => t.Name).HasMaxLength(100);
        builder.Property(t => t.TokenHash).HasMaxLength(64);
        builder.Property(t => t.Prefix).HasMaxLength(16);
        builder.HasIndex(t => t.TokenHash).IsUnique();
        builder.HasIndex(t => t.UserId);
        builder.HasOne(t => t.User).WithMany().HasForeignKey(t => t.UserId).OnDelete(DeleteBehavior.Cascade);
    }
}

internal sealed class SignInLinkConfiguration : IEntityTypeConfiguration<SignInLink>
{
    public void Configure(EntityTypeBuilder<SignInLink> builder)
    {
        builder.ToTable("sign_in_links");
        builder.Property(t => t.CodeHash).HasMaxLength(64);
        builder.HasIndex(t => t.CodeHash).IsUnique();
        builder.HasOne<RunfoldUser>().WithMany().HasForeignKey(t => t.UserId).OnDelete(DeleteBehavior.Cascade);
    }
}

internal sealed class InvitationConfiguration : IEntityTypeConfiguration<Invitation>
{
    public void Configure(EntityTypeBuilder<Invitation> builder)
    {
        builder.ToTable("invitations");
        builder.Property(i => i.CodeHash).HasMaxLength(64);
        builder.Property(i => i.Note).HasMaxLength(200);
        builder.Property(i => i.Role).HasMaxLength(16);
        builder.HasIndex(i => i.CodeHash).IsUnique();
        builder.HasIndex(i => i.StudyId);
        builder.HasOne<Study>().WithMany().HasForeignKey(i => i.StudyId).OnDelete(DeleteBehavior.Cascade);
        builder.HasOne<RunfoldUser>().WithMany().HasForeignKey(i => i.CreatedById).OnDelete(DeleteBehavior.Restrict);
    }
}
