using Npgsql;

namespace Runfold.Server.Tests.Infrastructure;

/// <summary>
/// Databases for tests. PostgreSQL: a fresh database per fixture in the throwaway cluster that Tests/run.sh
/// starts (RUNFOLD_TEST_POSTGRES). SQLite: a file in a fresh temporary folder.
/// </summary>
public static class TestDatabases
{
    public static string PostgresServer =>
        Environment.GetEnvironmentVariable("RUNFOLD_TEST_POSTGRES")
        ?? throw new InvalidOperationException(
            "RUNFOLD_TEST_POSTGRES is not set. Run the tests with Tests/run.sh, which starts a throwaway PostgreSQL cluster.");

    /// <summary>Creates an empty database and returns its connection string.</summary>
    public static async Task<string> CreatePostgresAsync()
    {
        var name = "runfold_test_" + Guid.NewGuid().ToString("N")[..12];
        await using (var connection = new NpgsqlConnection(PostgresServer))
        {
            await connection.OpenAsync();
            await using var create = new NpgsqlCommand($"CREATE DATABASE {name}", connection);
            await create.ExecuteNonQueryAsync();
        }
        return new NpgsqlConnectionStringBuilder(PostgresServer) { Database = name }.ConnectionString;
    }

    public static async Task DropPostgresAsync(string connectionString)
    {
        var name = new NpgsqlConnectionStringBuilder(connectionString).Database;
        NpgsqlConnection.ClearAllPools();
        await using var connection = new NpgsqlConnection(PostgresServer);
        await connection.OpenAsync();
        await using var drop = new NpgsqlCommand($"DROP DATABASE IF EXISTS {name} WITH (FORCE)", connection);
        await drop.ExecuteNonQueryAsync();
    }

    public static string NewTempFolder()
    {
        var path = Path.Combine(Path.GetTempPath(), "runfold-test-" + Guid.NewGuid().ToString("N")[..12]);
        Directory.CreateDirectory(path);
        return path;
    }

    public static void DeleteFolder(string path)
    {
        Microsoft.Data.Sqlite.SqliteConnection.ClearAllPools();
        try { Directory.Delete(path, recursive: true); }
        catch (IOException) { /* a file still open on a slow shutdown; the OS cleans the temp folder */ }
    }
}
