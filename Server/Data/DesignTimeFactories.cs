using Microsoft.EntityFrameworkCore;
using Microsoft.EntityFrameworkCore.Design;
using Npgsql;

namespace Runfold.Server.Data;

// Used only by `dotnet ef migrations add` (see DEVELOPERS.md); no database is contacted.

internal sealed class PostgresDesignTimeFactory : IDesignTimeDbContextFactory<PostgresRunfoldDbContext>
{
    public PostgresRunfoldDbContext CreateDbContext(string[] args)
    {
        var options = new DbContextOptionsBuilder<PostgresRunfoldDbContext>();
        StorageServiceCollectionExtensions.ConfigurePostgres(options,
            NpgsqlDataSource.Create("Host=localhost;Database=runfold_design_time"));
        return new PostgresRunfoldDbContext(options.Options);
    }
}

internal sealed class SqliteDesignTimeFactory : IDesignTimeDbContextFactory<SqliteRunfoldDbContext>
{
    public SqliteRunfoldDbContext CreateDbContext(string[] args)
    {
        var options = new DbContextOptionsBuilder<SqliteRunfoldDbContext>();
        StorageServiceCollectionExtensions.ConfigureSqlite(options, "Data Source=design-time.db");
        return new SqliteRunfoldDbContext(options.Options);
    }
}
