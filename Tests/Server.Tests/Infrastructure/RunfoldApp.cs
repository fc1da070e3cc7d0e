using System.Net.Http.Headers;
using System.Net.Http.Json;
using Microsoft.AspNetCore.Hosting;
using Microsoft.AspNetCore.Mvc.Testing;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Logging;
using Runfold.Server.Data;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Infrastructure;

/// <summary>
/// The real server in memory (WebApplicationFactory) on a fresh database: PostgreSQL by default, as in a team
/// install; SQLite when asked. The first admin's token is <see cref="AdminToken"/>.
/// </summary>
public sealed class RunfoldApp : WebApplicationFactory<Program>
{
    public const string AdminToken = "rf_test_admin_token_0123456789abcdef";

    private readonly Dictionary<string, string?> _settings;
    private readonly Func<ValueTask> _cleanup;
    private readonly Action<IServiceCollection>? _services;
    private readonly Action<ILoggingBuilder>? _logging;

    private RunfoldApp(Dictionary<string, string?> settings, Func<ValueTask> cleanup, StorageProvider provider,
        Action<IServiceCollection>? services, Action<ILoggingBuilder>? logging)
    {
        _settings = settings;
        _cleanup = cleanup;
        _services = services;
        _logging = logging;
        Provider = provider;
    }

    public StorageProvider Provider { get; }

    public string? PostgresConnectionString => _settings.GetValueOrDefault("RUNFOLD_POSTGRES");

    /// <param name="services">Replaces services after the server's own registrations (a fake time provider …).</param>
    /// <param name="sharedPostgres">Another instance's database: both servers then share it, as a team install
    /// with several instances does; the database is dropped by the instance that created it.</param>
    /// <param name="logging">Replaces the test logging set-up (the server's own log filters still apply).</param>
    /// <param name="database">A PostgreSQL database the test made (and drops) itself: instances on it can be stopped
    /// in any order.</param>
    public static async Task<RunfoldApp> StartAsync(StorageProvider provider = StorageProvider.Postgres, bool demo = false,
        IDictionary<string, string?>? extra = null, Action<IServiceCollection>? services = null, RunfoldApp? sharedPostgres = null,
        Action<ILoggingBuilder>? logging = null, string? database = null)
    {
        var settings = new Dictionary<string, string?>
        {
            ["RUNFOLD_ADMIN_TOKEN"] = AdminToken,
            ["RUNFOLD_DEMO"] = demo ? "1" : "0",
        };
        Func<ValueTask> cleanup;
        if ((database ?? sharedPostgres?.PostgresConnectionString) is { } shared)
        {
            settings["RUNFOLD_POSTGRES"] = shared;
            cleanup = () => ValueTask.CompletedTask;
        }
        else if (provider == StorageProvider.Postgres)
        {
            var connectionString = await TestDatabases.CreatePostgresAsync();
            settings["RUNFOLD_POSTGRES"] = connectionString;
            cleanup = async () => await TestDatabases.DropPostgresAsync(connectionString);
        }
        else
        {
            var folder = TestDatabases.NewTempFolder();
            settings["RUNFOLD_DATA"] = folder;
            cleanup = () => { TestDatabases.DeleteFolder(folder); return ValueTask.CompletedTask; };
        }
        foreach (var (key, value) in extra ?? new Dictionary<string, string?>()) settings[key] = value;
        var app = new RunfoldApp(settings, cleanup, provider, services, logging);
        _ = app.Server; // start now, so migrations and the first admin exist before the first request
        return app;
    }

    protected override void ConfigureWebHost(IWebHostBuilder builder)
    {
        foreach (var (key, value) in _settings) builder.UseSetting(key, value);
        builder.UseEnvironment("Production");
        builder.ConfigureLogging(logging => logging.SetMinimumLevel(LogLevel.Warning));
        if (_logging is not null) builder.ConfigureLogging(_logging);
        if (_services is not null) builder.ConfigureServices(_services);
    }

    /// <summary>A client that sends the admin's token, as a cluster script would.</summary>
    public HttpClient AdminClient() => ClientWithToken(AdminToken);

    public HttpClient ClientWithToken(string? token)
    {
        var client = CreateClient(new WebApplicationFactoryClientOptions { AllowAutoRedirect = false });
        if (token is not null) client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", token);
        return client;
    }

    /// <summary>A fresh context on the app's database, for checking what was stored.</summary>
    public RunfoldDbContext Db() => Services.GetRequiredService<IDbContextFactory<RunfoldDbContext>>().CreateDbContext();

    public override async ValueTask DisposeAsync()
    {
        await base.DisposeAsync();
        await _cleanup();
    }
}

/// <summary>JSON helpers with the API's own conventions.</summary>
public static class ApiJson
{
    public static Task<HttpResponseMessage> PostJsonAsync<T>(this HttpClient client, string url, T body) =>
        client.PostAsJsonAsync(url, body, RunfoldJson.Options);

    public static async Task<T> ReadAsync<T>(this HttpResponseMessage response) =>
        (await response.Content.ReadFromJsonAsync<T>(RunfoldJson.Options))!;
}
