using Microsoft.EntityFrameworkCore;
using Npgsql;
using Runfold.Server.Data;
using Runfold.Server.Tests.Infrastructure;

namespace Runfold.Server.Tests.Data;

public sealed class MigrationTests
{
    [Fact]
    public async Task Migrations_apply_to_an_empty_PostgreSQL_database()
    {
        await using var store = await TestStore.CreateAsync(StorageProvider.Postgres, migrate: false);
        await using var db = store.Db();
        Assert.NotEmpty(await db.Database.GetPendingMigrationsAsync());

        await db.Database.MigrateAsync();

        Assert.Empty(await db.Database.GetPendingMigrationsAsync());
        Assert.Equal(db.Database.GetMigrations(), await db.Database.GetAppliedMigrationsAsync());
        var connection = (NpgsqlConnection)db.Database.GetDbConnection();
        await connection.OpenAsync();
        await using var tables = new NpgsqlCommand("SELECT table_name FROM information_schema.tables WHERE table_schema = 'public'", connection);
        var names = new List<string>();
        await using (var reader = await tables.ExecuteReaderAsync())
            while (await reader.ReadAsync()) names.Add(reader.GetString(0));
        foreach (var table in new[] { "studies", "factors", "responses", "waves", "runs", "result_revisions", "audit_events", "analysis_snapshots", "study_members", "users", "api_tokens" })
            Assert.Contains(table, names);
    }

    [Theory]
    [InlineData(StorageProvider.Postgres)]
    [InlineData(StorageProvider.Sqlite)]
    public async Task Each_provider_has_a_migration_for_every_model_change(StorageProvider provider)
    {
        await using var store = await TestStore.CreateAsync(provider);
        await using var db = store.Db();
        Assert.False(db.Database.HasPendingModelChanges(),
            $"The model has changes with no {provider} migration; add one (DEVELOPERS.md, 'Adding a migration').");
    }
}
