using Microsoft.EntityFrameworkCore;

namespace Runfold.Server.Data;

/// <summary>Applies the provider's migrations at start-up (EF Core serialises concurrent migrators).</summary>
public sealed partial class DatabaseInitializer(IDbContextFactory<RunfoldDbContext> contexts, ILogger<DatabaseInitializer> logger)
{
    public async Task MigrateAsync(CancellationToken cancellationToken)
    {
        await using var db = await contexts.CreateDbContextAsync(cancellationToken);
        if (db.Provider == StorageProvider.Sqlite)
            await db.Database.ExecuteSqlRawAsync("PRAGMA journal_mode=WAL;", cancellationToken);
        await db.Database.MigrateAsync(cancellationToken);
        Log.Ready(logger, db.Provider, db.Database.GetMigrations().LastOrDefault() ?? "none");
    }

    private static partial class Log
    {
        [LoggerMessage(Level = LogLevel.Information, Message = "The {Provider} database is at migration {Migration}")]
        public static partial void Ready(ILogger logger, StorageProvider provider, string migration);
    }
}
