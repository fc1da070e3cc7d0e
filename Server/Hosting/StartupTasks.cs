using Microsoft.AspNetCore.Hosting.Server;
using Microsoft.AspNetCore.Hosting.Server.Features;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Demo;
using Runfold.Server.Studies;

namespace Runfold.Server.Hosting;

/// <summary>
/// Before the server accepts requests: apply migrations, create the first admin on an empty database, and seed
/// the demo study when asked. Once listening: print the address and how to sign in.
/// </summary>
public sealed class StartupTasks(
    IServiceProvider services,
    RunfoldSettings settings,
    IHostApplicationLifetime lifetime,
    IServer server) : IHostedService
{
    public async Task StartAsync(CancellationToken cancellationToken)
    {
        await services.GetRequiredService<DatabaseInitializer>().MigrateAsync(cancellationToken);

        await using var scope = services.CreateAsyncScope();
        var bootstrap = scope.ServiceProvider.GetRequiredService<AdminBootstrap>();
        var outcome = await bootstrap.EnsureAdminAsync(cancellationToken);
        if (outcome is not null && settings.SeedDemo) await SeedDemoAsync(scope.ServiceProvider, outcome, cancellationToken);

        // The embedded store runs on one person's machine: a fresh one-time link each start is a convenience.
        var code = outcome?.SignInCode ?? (settings.Provider == StorageProvider.Sqlite ? await bootstrap.NewAdminLinkAsync(cancellationToken) : null);
        lifetime.ApplicationStarted.Register(() => PrintWelcome(outcome, code));
    }

    public Task StopAsync(CancellationToken cancellationToken) => Task.CompletedTask;

    private static async Task SeedDemoAsync(IServiceProvider scoped, BootstrapOutcome admin, CancellationToken cancellationToken)
    {
        var db = scoped.GetRequiredService<RunfoldDbContext>();
        if (await db.Studies.AnyAsync(cancellationToken)) return;
        var caller = new Caller(admin.AdminId, AdminBootstrap.AdminUserName, IsAdmin: true, ApiTokenId: null);
        await DemoSeeder.SeedAsync(scoped, caller, cancellationToken);
    }

    /// <summary>Written to the console, not to the logs: the token and link are secrets shown once.</summary>
    private void PrintWelcome(BootstrapOutcome? outcome, string? code)
    {
        var address = server.Features.Get<IServerAddressesFeature>()?.Addresses.FirstOrDefault() ?? "http://localhost:5000";
        address = address.Replace("://[::]", "://localhost", StringComparison.Ordinal)
            .Replace("://0.0.0.0", "://localhost", StringComparison.Ordinal)
            .Replace("://+", "://localhost", StringComparison.Ordinal)
            .Replace("://*", "://localhost", StringComparison.Ordinal);
        var storage = settings.Provider == StorageProvider.Sqlite ? $"embedded SQLite at {settings.SqlitePath}" : "PostgreSQL";
        Console.WriteLine();
        Console.WriteLine($"Runfold is running at {address}  (storage: {storage})");
        if (code is not null) Console.WriteLine($"  Sign in as admin (one-time link, 24 h): {address}/auth/link/{code}");
        if (outcome?.GeneratedToken is { } token)
            Console.WriteLine($"  Admin API token (shown only now): {token}");
        else if (outcome is not null)
            Console.WriteLine("  The admin's API token is the value of RUNFOLD_ADMIN_TOKEN.");
        Console.WriteLine($"  API reference: {address}/api-docs");
        Console.WriteLine();
    }
}
