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

    /// <summary>RUNFOLD_MAX_UPLOAD_MB: the largest bulk results file (default 10 MB).</summary>
    public long MaxUploadBytes { get; init; } = 10L * 1024 * 1024;

    /// <summary>RUNFOLD_SIGNIN_PER_MINUTE: sign-in attempts per client address and minute (default 10).</summary>
    public int SignInPerMinute { get; init; } = 10;

    /// <summary>RUNFOLD_TOKEN_PER_MINUTE: API requests per token and minute (default 1,200, in bursts of as many).</summary>
    public int TokenRequestsPerMinute { get; init; } = 1200;

    /// <summary>RUNFOLD_ANALYSIS_DEBOUNCE_MS: a refit starts once no result has come for this long (default 250 ms).</summary>
    public TimeSpan AnalysisDebounce { get; init; } = TimeSpan.FromMilliseconds(250);

    /// <summary>RUNFOLD_ANALYSIS_MAX_WAIT_MS: …or once the oldest result not yet analysed has waited this long
    /// (default 2,000 ms).</summary>
    public TimeSpan AnalysisMaxWait { get; init; } = TimeSpan.FromSeconds(2);

    /// <summary>RUNFOLD_OIDC_AUTHORITY, _CLIENT_ID, _CLIENT_SECRET, _NAME: the company's single sign-on
    /// (OpenID Connect); off unless the authority and client id are set.</summary>
    public SingleSignOnSettings? SingleSignOn { get; init; }

    public StorageProvider Provider => PostgresConnectionString is null ? StorageProvider.Sqlite : StorageProvider.Postgres;

    public string SqlitePath => Path.GetFullPath(Path.Combine(DataDirectory, "runfold.db"));

    public static RunfoldSettings From(IConfiguration configuration)
    {
        ArgumentNullException.ThrowIfNull(configuration);
        var postgres = NullIfBlank(configuration["RUNFOLD_POSTGRES"]);
        var demo = NullIfBlank(configuration["RUNFOLD_DEMO"]);
        var authority = NullIfBlank(configuration["RUNFOLD_OIDC_AUTHORITY"]);
        var clientId = NullIfBlank(configuration["RUNFOLD_OIDC_CLIENT_ID"]);
        return new RunfoldSettings
        {
            PostgresConnectionString = postgres,
            DataDirectory = NullIfBlank(configuration["RUNFOLD_DATA"]) ?? "runfold-data",
            SeedDemo = demo is null ? postgres is null : demo is "1" or "true" or "yes" or "on",
            AdminToken = NullIfBlank(configuration["RUNFOLD_ADMIN_TOKEN"]),
            MaxRuns = PositiveInt(configuration, "RUNFOLD_MAX_RUNS", 10_000),
            MaxUploadBytes = PositiveInt(configuration, "RUNFOLD_MAX_UPLOAD_MB", 10) * 1024L * 1024,
            SignInPerMinute = PositiveInt(configuration, "RUNFOLD_SIGNIN_PER_MINUTE", 10),
            TokenRequestsPerMinute = PositiveInt(configuration, "RUNFOLD_TOKEN_PER_MINUTE", 1200),
            AnalysisDebounce = TimeSpan.FromMilliseconds(PositiveInt(configuration, "RUNFOLD_ANALYSIS_DEBOUNCE_MS", 250)),
            AnalysisMaxWait = TimeSpan.FromMilliseconds(PositiveInt(configuration, "RUNFOLD_ANALYSIS_MAX_WAIT_MS", 2000)),
            SingleSignOn = authority is null || clientId is null ? null : new SingleSignOnSettings(
                authority, clientId, NullIfBlank(configuration["RUNFOLD_OIDC_CLIENT_SECRET"]),
                NullIfBlank(configuration["RUNFOLD_OIDC_NAME"]) ?? "company sign-on"),
        };
    }

    private static int PositiveInt(IConfiguration configuration, string key, int fallback)
    {
        var text = NullIfBlank(configuration[key]);
        if (text is null) return fallback;
        return int.TryParse(text, out var value) && value > 0
            ? value
            : throw new InvalidOperationException($"{key} must be a positive whole number; it is '{text}'.");
    }

    private static string? NullIfBlank(string? value) => string.IsNullOrWhiteSpace(value) ? null : value.Trim();
}

/// <summary>OpenID Connect sign-in with the company's identity provider. <see cref="Name"/> labels the button.</summary>
public sealed record SingleSignOnSettings(string Authority, string ClientId, string? ClientSecret, string Name);
