using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;

namespace Runfold.Server.Auth;

/// <summary>One-time sign-in links: a random code whose hash is stored; redeeming it is a conditional update,
/// so a link works exactly once.</summary>
public sealed class SignInLinks(RunfoldDbContext db, TimeProvider time)
{
    public static readonly TimeSpan Lifetime = TimeSpan.FromHours(24);

    /// <summary>Creates a link for the user and returns its code (shown once, never stored).</summary>
    public async Task<string> CreateAsync(Guid userId, CancellationToken cancellationToken)
    {
        var code = Secrets.NewCode();
        var now = time.GetUtcNow();
        db.SignInLinks.Add(new SignInLink { UserId = userId, CodeHash = Secrets.Hash(code), CreatedAt = now, ExpiresAt = now + Lifetime });
        await db.SaveChangesAsync(cancellationToken);
        return code;
    }

    /// <summary>The user the code signs in, or null if it is unknown, used or expired.</summary>
    public async Task<Guid?> RedeemAsync(string code, CancellationToken cancellationToken)
    {
        if (string.IsNullOrWhiteSpace(code) || code.Length > 200) return null;
        var hash = Secrets.Hash(code);
        var now = time.GetUtcNow();
        var link = await db.SignInLinks.AsNoTracking().FirstOrDefaultAsync(l => l.CodeHash == hash, cancellationToken);
        if (link is null) return null;
        var taken = await db.SignInLinks
            .Where(l => l.Id == link.Id && l.UsedAt == null && l.ExpiresAt > now)
            .ExecuteUpdateAsync(s => s.SetProperty(l => l.UsedAt, now), cancellationToken);
        return taken == 1 ? link.UserId : null;
    }
}
