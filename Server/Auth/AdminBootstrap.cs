using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Server.Hosting;

namespace Runfold.Server.Auth;

/// <summary>What the first start created, to be printed once to the console (never to the logs).</summary>
public sealed record BootstrapOutcome(Guid AdminId, string? GeneratedToken, string? SignInCode);

/// <summary>
/// On an empty database, creates the first admin. RUNFOLD_ADMIN_TOKEN, when set, becomes the admin's API token;
/// otherwise a random token and a one-time sign-in link are made and printed once.
/// </summary>
public sealed class AdminBootstrap(RunfoldDbContext db, RunfoldSettings settings, SignInLinks links, TimeProvider time)
{
    public const string AdminUserName = "admin";

    /// <summary>Null when users already exist (nothing is created).</summary>
    public async Task<BootstrapOutcome?> EnsureAdminAsync(CancellationToken cancellationToken)
    {
        if (await db.Users.AnyAsync(cancellationToken)) return null;
        var now = time.GetUtcNow();
        var admin = new RunfoldUser
        {
            Id = Guid.CreateVersion7(),
            UserName = AdminUserName,
            NormalizedUserName = AdminUserName.ToUpperInvariant(),
            DisplayName = "Administrator",
            IsAdmin = true,
            CreatedAt = now,
            SecurityStamp = Guid.NewGuid().ToString("N"),
            ConcurrencyStamp = Guid.NewGuid().ToString("N"),
            LockoutEnabled = true,
        };
        var token = settings.AdminToken ?? Secrets.NewToken();
        db.Users.Add(admin);
        db.ApiTokens.Add(new ApiToken
        {
            UserId = admin.Id,
            Name = settings.AdminToken is null ? "first start" : "RUNFOLD_ADMIN_TOKEN",
            TokenHash = Secrets.Hash(token),
            Prefix = Secrets.DisplayPrefix(token),
            CreatedAt = now,
        });
        try
        {
            await db.SaveChangesAsync(cancellationToken);
        }
        catch (DbUpdateException)
        {
            db.ChangeTracker.Clear();
            if (await db.Users.AnyAsync(u => u.UserName == AdminUserName, cancellationToken))
                return null; // another instance bootstrapped the same empty database first
            throw;
        }
        var code = settings.AdminToken is null ? await links.CreateAsync(admin.Id, cancellationToken) : null;
        return new BootstrapOutcome(admin.Id, settings.AdminToken is null ? token : null, code);
    }

    /// <summary>A fresh one-time link for the admin (printed at each start of the embedded, single-machine mode).</summary>
    public async Task<string?> NewAdminLinkAsync(CancellationToken cancellationToken)
    {
        var adminId = await db.Users.Where(u => u.IsAdmin).OrderBy(u => u.CreatedAt).Select(u => (Guid?)u.Id).FirstOrDefaultAsync(cancellationToken);
        return adminId is { } id ? await links.CreateAsync(id, cancellationToken) : null;
    }
}
