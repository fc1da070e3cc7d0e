using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.ChangeTracking;
using Microsoft.EntityFrameworkCore.Metadata.Builders;
using Runfold.Server.Data.Entities;

namespace Runfold.Server.Data.Configurations;

internal sealed class WaveConfiguration : IEntityTypeConfiguration<Wave>
{
    public void Configure(EntityTypeBuilder<Wave> builder)
    {
        builder.ToTable("waves");
        builder.HasIndex(w => new { w.StudyId, w.Number }).IsUnique();
    }
}

internal sealed class RunConfiguration : IEntityTypeConfiguration<Run>
{
    public void Configure(EntityTypeBuilder<Run> builder)
    {
        builder.ToTable("runs");
        builder.HasIndex(r => new { r.StudyId, r.Number }).IsUnique();
        // The claim queue: only open runs, in number order, so a claim never walks over runs already claimed.
        builder.HasIndex(r => new { r.StudyId, r.Number }, "OpenQueue").HasFilter("state = 'open'").HasDatabaseName("ix_runs_open_queue");
        builder.HasIndex(r => r.AssigneeId);
        // The lease sweep: claimed runs by lease end.
        builder.HasIndex(r => r.LeaseExpiresAt, "LapseQueue").HasFilter("state = 'claimed'").HasDatabaseName("ix_runs_claimed_lease");
        builder.Property(r => r.State).HasMaxLength(16);
        builder.Property(r => r.Version).IsConcurrencyToken();
        builder.HasOne<Study>().WithMany().HasForeignKey(r => r.StudyId).OnDelete(DeleteBehavior.Cascade);
        builder.HasOne(r => r.Wave).WithMany().HasForeignKey(r => r.WaveId).OnDelete(DeleteBehavior.Restrict);
        builder.HasOne(r => r.Assignee).WithMany().HasForeignKey(r => r.AssigneeId).OnDelete(DeleteBehavior.SetNull);
    }
}

internal sealed class ResultRevisionConfiguration : IEntityTypeConfiguration<ResultRevision>
{
    private static readonly JsonSerializerOptions Json = new(JsonSerializerDefaults.General);

    public void Configure(EntityTypeBuilder<ResultRevision> builder)
    {
        builder.ToTable("result_revisions");
        builder.HasIndex(r => new { r.RunId, r.Revision }).IsUnique();
        builder.HasIndex(r => new { r.RunId, r.IdempotencyKey }).IsUnique();
        builder.Property(r => r.IdempotencyKey).HasMaxLength(200);
        builder.Property(r => r.RequestHash).HasMaxLength(64);
        builder.Property(r => r.State).HasMaxLength(16);
        builder.Property(r => r.Note).HasMaxLength(4000);
        builder.Property(r => r.Values).HasConversion(
            v => JsonSerializer.Serialize(v, Json),
            s => JsonSerializer.Deserialize<Dictionary<string, double>>(s, Json) ?? new Dictionary<string, double>(),
            new ValueComparer<Dictionary<string, double>>(
                (a, b) => a!.Count == b!.Count && !a.Except(b).Any(),
                v => v.Aggregate(0, (h, e) => HashCode.Combine(h, e.Key, e.Value)),
                v => new Dictionary<string, double>(v)));
        builder.HasOne<Run>().WithMany().HasForeignKey(r => r.RunId).OnDelete(DeleteBehavior.Cascade);
        builder.HasOne<RunfoldUser>().WithMany().HasForeignKey(r => r.AuthorId).OnDelete(DeleteBehavior.Restrict);
    }
}

internal sealed class AuditEventConfiguration : IEntityTypeConfiguration<AuditEvent>
{
    public void Configure(EntityTypeBuilder<AuditEvent> builder)
    {
        builder.ToTable("audit_events");
        builder.Property(e => e.Source).HasMaxLength(16);
        builder.Property(e => e.Kind).HasMaxLength(64);
        builder.Property(e => e.Detail).HasMaxLength(2000);
        builder.HasIndex(e => new { e.StudyId, e.Id });
        builder.HasOne<Study>().WithMany().HasForeignKey(e => e.StudyId).OnDelete(DeleteBehavior.Cascade);
    }
}

internal sealed class AnalysisSnapshotConfiguration : IEntityTypeConfiguration<AnalysisSnapshot>
{
    public void Configure(EntityTypeBuilder<AnalysisSnapshot> builder)
    {
        builder.ToTable("analysis_snapshots");
        builder.HasIndex(s => new { s.StudyId, s.Version }).IsUnique();
        builder.HasOne<Study>().WithMany().HasForeignKey(s => s.StudyId).OnDelete(DeleteBehavior.Cascade);
    }
}
