using Microsoft.AspNetCore.DataProtection.EntityFrameworkCore;
using Microsoft.AspNetCore.Identity;
using Microsoft.AspNetCore.Identity.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data.Entities;
using Runfold.Shared.Studies;

namespace Runfold.Server.Data;

/// <summary>
/// The one model of Runfold's storage. Two thin subclasses exist only so each provider keeps its own migrations
/// (<see cref="PostgresRunfoldDbContext"/>, <see cref="SqliteRunfoldDbContext"/>); code depends on this type.
/// </summary>
public abstract class RunfoldDbContext(DbContextOptions options)
    : IdentityDbContext<RunfoldUser, IdentityRole<Guid>, Guid>(options), IDataProtectionKeyContext
{
    /// <summary>Cookie and antiforgery keys, shared by every server instance on the same database.</summary>
    public DbSet<DataProtectionKey> DataProtectionKeys => Set<DataProtectionKey>();

    public DbSet<ApiToken> ApiTokens => Set<ApiToken>();

    public DbSet<SignInLink> SignInLinks => Set<SignInLink>();

    public DbSet<Invitation> Invitations => Set<Invitation>();

    public DbSet<Study> Studies => Set<Study>();

    public DbSet<StudyFactor> StudyFactors => Set<StudyFactor>();

    public DbSet<StudyResponse> StudyResponses => Set<StudyResponse>();

    public DbSet<StudyMember> StudyMembers => Set<StudyMember>();

    public DbSet<Wave> Waves => Set<Wave>();

    public DbSet<Run> Runs => Set<Run>();

    public DbSet<ResultRevision> ResultRevisions => Set<ResultRevision>();

    public DbSet<AuditEvent> AuditEvents => Set<AuditEvent>();

    public DbSet<AnalysisSnapshot> AnalysisSnapshots => Set<AnalysisSnapshot>();

    public DbSet<Sharing.ShareLink> ShareLinks => Set<Sharing.ShareLink>();

    public abstract StorageProvider Provider { get; }

    protected override void OnModelCreating(ModelBuilder builder)
    {
        base.OnModelCreating(builder);
        builder.Entity<RunfoldUser>().ToTable("users");
        builder.Entity<IdentityRole<Guid>>().ToTable("roles");
        builder.Entity<IdentityUserRole<Guid>>().ToTable("user_roles");
        builder.Entity<IdentityUserClaim<Guid>>().ToTable("user_claims");
        builder.Entity<IdentityUserLogin<Guid>>().ToTable("user_logins");
        builder.Entity<IdentityUserToken<Guid>>().ToTable("user_tokens");
        builder.Entity<IdentityRoleClaim<Guid>>().ToTable("role_claims");
        builder.Entity<DataProtectionKey>().ToTable("data_protection_keys");
        builder.ApplyConfigurationsFromAssembly(typeof(RunfoldDbContext).Assembly);
    }

    protected override void ConfigureConventions(ModelConfigurationBuilder configurationBuilder)
    {
        ArgumentNullException.ThrowIfNull(configurationBuilder);
        // Enums are stored as their camelCase names ("open", "claimed"), readable in SQL and in dumps.
        configurationBuilder.Properties<RunState>().HaveConversion<CamelCaseEnumConverter<RunState>>();
        configurationBuilder.Properties<FactorKind>().HaveConversion<CamelCaseEnumConverter<FactorKind>>();
        configurationBuilder.Properties<FactorScale>().HaveConversion<CamelCaseEnumConverter<FactorScale>>();
        configurationBuilder.Properties<ResponseGoal>().HaveConversion<CamelCaseEnumConverter<ResponseGoal>>();
        configurationBuilder.Properties<StudyRole>().HaveConversion<CamelCaseEnumConverter<StudyRole>>();
        configurationBuilder.Properties<WaveKind>().HaveConversion<CamelCaseEnumConverter<WaveKind>>();
    }
}

public enum StorageProvider { Sqlite, Postgres }

public sealed class PostgresRunfoldDbContext(DbContextOptions<PostgresRunfoldDbContext> options) : RunfoldDbContext(options)
{
    public override StorageProvider Provider => StorageProvider.Postgres;
}

public sealed class SqliteRunfoldDbContext(DbContextOptions<SqliteRunfoldDbContext> options) : RunfoldDbContext(options)
{
    public override StorageProvider Provider => StorageProvider.Sqlite;

    protected override void ConfigureConventions(ModelConfigurationBuilder configurationBuilder)
    {
        base.ConfigureConventions(configurationBuilder);
        // SQLite has no date type: store UTC instants as sortable integers so comparisons and ORDER BY work.
        configurationBuilder.Properties<DateTimeOffset>().HaveConversion<Microsoft.EntityFrameworkCore.Storage.ValueConversion.DateTimeOffsetToBinaryConverter>();
    }
}
