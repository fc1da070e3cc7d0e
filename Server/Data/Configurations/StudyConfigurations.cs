using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using Runfold.Server.Data.Entities;

namespace Runfold.Server.Data.Configurations;

internal sealed class StudyConfiguration : IEntityTypeConfiguration<Study>
{
    public void Configure(EntityTypeBuilder<Study> builder)
    {
        builder.ToTable("studies");
        builder.Property(s => s.Name).HasMaxLength(200);
        builder.HasMany(s => s.Factors).WithOne().HasForeignKey(f => f.StudyId).OnDelete(DeleteBehavior.Cascade);
        builder.HasMany(s => s.Responses).WithOne().HasForeignKey(r => r.StudyId).OnDelete(DeleteBehavior.Cascade);
        builder.HasMany(s => s.Waves).WithOne().HasForeignKey(w => w.StudyId).OnDelete(DeleteBehavior.Cascade);
        builder.HasMany(s => s.Members).WithOne().HasForeignKey(m => m.StudyId).OnDelete(DeleteBehavior.Cascade);
        builder.HasOne<RunfoldUser>().WithMany().HasForeignKey(s => s.CreatedById).OnDelete(DeleteBehavior.Restrict);
    }
}

internal sealed class StudyFactorConfiguration : IEntityTypeConfiguration<StudyFactor>
{
    public void Configure(EntityTypeBuilder<StudyFactor> builder)
    {
        builder.ToTable("factors");
        builder.Property(f => f.Name).HasMaxLength(64);
        builder.Property(f => f.Unit).HasMaxLength(32);
        builder.HasIndex(f => new { f.StudyId, f.Position }).IsUnique();
    }
}

internal sealed class StudyResponseConfiguration : IEntityTypeConfiguration<StudyResponse>
{
    public void Configure(EntityTypeBuilder<StudyResponse> builder)
    {
        builder.ToTable("responses");
        builder.Property(r => r.Name).HasMaxLength(64);
        builder.Property(r => r.Unit).HasMaxLength(32);
        builder.HasIndex(r => new { r.StudyId, r.Position }).IsUnique();
    }
}

internal sealed class StudyMemberConfiguration : IEntityTypeConfiguration<StudyMember>
{
    public void Configure(EntityTypeBuilder<StudyMember> builder)
    {
        builder.ToTable("study_members");
        builder.HasKey(m => new { m.StudyId, m.UserId });
        builder.HasOne(m => m.User).WithMany().HasForeignKey(m => m.UserId).OnDelete(DeleteBehavior.Cascade);
        builder.HasIndex(m => m.UserId);
    }
}
