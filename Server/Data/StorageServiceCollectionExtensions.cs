using Microsoft.AspNetCore.DataProtection;
using Microsoft.EntityFrameworkCore;
using Npgsql;
using Runfold.Server.Hosting;

namespace Runfold.Server.Data;

public static class StorageServiceCollectionExtensions
{
    /// <summary>Registers the database: PostgreSQL when a connection string is set, else embedded SQLite.
    /// Code asks for <see cref="IDbContextFactory{RunfoldDbContext}"/> (or a scoped <see cref="RunfoldDbContext"/>).</summary>
    public static IServiceCollection AddRunfoldStorage(this IServiceCollection services, RunfoldSettings settings)
    {
        ArgumentNullException.ThrowIfNull(settings);
        if (settings.PostgresConnectionString is { } postgres)
        {
            var builder = new NpgsqlDataSourceBuilder(postgres) { Name = "runfold" };
            // The claim, heartbeat and result statements repeat on every request: prepare them once per connection.
            if (builder.ConnectionStringBuilder.MaxAutoPrepare == 0) builder.ConnectionStringBuilder.MaxAutoPrepare = 32;
            var dataSource = builder.Build();
            services.AddSingleton(dataSource);
            services.AddPooledDbContextFactory<PostgresRunfoldDbContext>(o => ConfigurePostgres(o, dataSource));
            services.AddSingleton<IDbContextFactory<RunfoldDbContext>, ContextFactory<PostgresRunfoldDbContext>>();
        }
        else
        {
            Directory.CreateDirectory(Path.GetDirectoryName(settings.SqlitePath)!);
            var sqlite = $"Data Source={settings.SqlitePath};Default Timeout=30;Pooling=True";
            services.AddPooledDbContextFactory<SqliteRunfoldDbContext>(o => ConfigureSqlite(o, sqlite));
            services.AddSingleton<IDbContextFactory<RunfoldDbContext>, ContextFactory<SqliteRunfoldDbContext>>();
        }
        services.AddScoped(sp => sp.GetRequiredService<IDbContextFactory<RunfoldDbContext>>().CreateDbContext());
        services.AddSingleton<DatabaseInitializer>();
        services.AddDataProtection().SetApplicationName("Runfold").PersistKeysToDbContext<RunfoldDbContext>();
        return services;
    }

    internal static void ConfigurePostgres(DbContextOptionsBuilder options, NpgsqlDataSource dataSource) =>
        options.UseNpgsql(dataSource, n => n.MigrationsHistoryTable("__ef_migrations_history"))
            .UseSnakeCaseNamingConvention();

    internal static void ConfigureSqlite(DbContextOptionsBuilder options, string connectionString) =>
        options.UseSqlite(connectionString, s => s.MigrationsHistoryTable("__ef_migrations_history"))
            .UseSnakeCaseNamingConvention();

    /// <summary>Hands out the provider's subclass as the common context type.</summary>
    private sealed class ContextFactory<TContext>(IDbContextFactory<TContext> inner) : IDbContextFactory<RunfoldDbContext>
        where TContext : RunfoldDbContext
    {
        public RunfoldDbContext CreateDbContext() => inner.CreateDbContext();
    }
}
