using Runfold.Server.Data;

namespace Runfold.Server.Hosting;

/// <summary>
/// The server's settings, read once at start from configuration (environment variables of DESIGN.md §5, or the
/// same keys in appsettings / the command line).
/// </summary>
public sealed record RunfoldSettings
{
    /// <summary>RUNFOLD_POSTGRES: a PostgreSQL connection string; when absent, the embedded SQLite store is used.</summary>
    public string? PostgresConnectionString { get; init; }

    /// <summary>RUNFOLD_DATA: the folder of the embedded SQLite store (default ./runfold-data).</summary>
    public string DataDirectory { get; init; } = "runfold-data";

    /// <summary>RUNFOLD_DEMO: seed the demo study on an empty database (default on for SQLite, off for PostgreSQL).</summary>
    public bool SeedDemo { get; init; }

    /// <summary>RUNFOLD_ADMIN_TOKEN: becomes the first admin's API token when the database is empty.</summary>
    public string? AdminToken { get; init; }

    /// <summary>RUNFOLD_MAX_RUNS: the largest design the server generates (default 10,000).</summary>
    public int MaxRuns { get; init; } = 10_000;

    public StorageProvider Provider => PostgresConnectionString is null ? StorageProvider.Sqlite : StorageProvider.Postgres;

    public string SqlitePath => Path.GetFullPath(Path.Combine(DataDirectory, "runfold.db"));

    public static RunfoldSettings From(IConfiguration configuration)
    {
        ArgumentNullException.ThrowIfNull(configuration);
        var postgres = NullIfBlank(configuration["RUNFOLD_POSTGRES"]);
        var demo = NullIfBlank(configuration["RUNFOLD_DEMO"]);
        var maxRuns = NullIfBlank(configuration["RUNFOLD_MAX_RUNS"]);
        return new RunfoldSettings
        {
            PostgresConnectionString = postgres,
            DataDirectory = NullIfBlank(configuration["RUNFOLD_DATA"]) ?? "runfold-data",
            SeedDemo = demo is null ? postgres is null : demo is "1" or "true" or "yes" or "on",
            AdminToken = NullIfBlank(configuration["RUNFOLD_ADMIN_TOKEN"]),
            MaxRuns = maxRuns is null ? 10_000 : int.TryParse(maxRuns, out var m) && m > 0
                ? m
                : throw new InvalidOperationException($"RUNFOLD_MAX_RUNS must be a positive whole number; it is '{maxRuns}'."),
        };
    }

    private static string? NullIfBlank(string? value) => string.IsNullOrWhiteSpace(value) ? null : value.Trim();
}
