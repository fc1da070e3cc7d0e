using Microsoft.EntityFrameworkCore;
using Npgsql;
using Runfold.Server.Data;

namespace Runfold.Server.Tests.Infrastructure;

/// <summary>A bare, migrated database of either provider, without the web host: for storage tests.</summary>
public sealed class TestStore : IAsyncDisposable
{
    private readonly Func<ValueTask> _cleanup;
    private readonly Func<RunfoldDbContext> _create;

    private TestStore(StorageProvider provider, Func<RunfoldDbContext> create, Func<ValueTask> cleanup)
    {
        Provider = provider;
        _create = create;
        _cleanup = cleanup;
    }

    public StorageProvider Provider { get; }

    public RunfoldDbContext Db() => _create();

    public static async Task<TestStore> CreateAsync(StorageProvider provider, bool migrate = true)
    {
        TestStore store;
        if (provider == StorageProvider.Postgres)
        {
            var connectionString = await TestDatabases.CreatePostgresAsync();
            var dataSource = NpgsqlDataSource.Create(connectionString);
            var options = new DbContextOptionsBuilder<PostgresRunfoldDbContext>();
            StorageServiceCollectionExtensions.ConfigurePostgres(options, dataSource);
            store = new TestStore(provider, () => new PostgresRunfoldDbContext(options.Options), async () =>
            {
                await dataSource.DisposeAsync();
                await TestDatabases.DropPostgresAsync(connectionString);
            });
        }
        else
        {
            var folder = TestDatabases.NewTempFolder();
            var options = new DbContextOptionsBuilder<SqliteRunfoldDbContext>();
            StorageServiceCollectionExtensions.ConfigureSqlite(options, $"Data Source={Path.Combine(folder, "runfold.db")}");
            store = new TestStore(provider, () => new SqliteRunfoldDbContext(options.Options), () =>
            {
                TestDatabases.DeleteFolder(folder);
                return ValueTask.CompletedTask;
            });
        }
        if (migrate)
        {
            await using var db = store.Db();
            await db.Database.MigrateAsync();
        }
        return store;
    }

    public ValueTask DisposeAsync() => _cleanup();
}
