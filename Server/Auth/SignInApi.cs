using Microsoft.AspNetCore.Identity;
using Microsoft.AspNetCore.Mvc;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;

namespace Runfold.Server.Auth;

/// <summary>Browser sign-in: a one-time link, or an API token pasted into the sign-in page; both set the cookie.</summary>
public static class SignInApi
{
    public static IEndpointRouteBuilder MapSignInApi(this IEndpointRouteBuilder app)
    {
        var group = app.MapGroup("/auth").ExcludeFromDescription();

        group.MapGet("/link/{code}", async (string code, SignInLinks links, UserManager<RunfoldUser> users,
            SignInManager<RunfoldUser> signIn, CancellationToken ct) =>
        {
            var userId = await links.RedeemAsync(code, ct);
            var user = userId is { } id ? await users.FindByIdAsync(id.ToString()) : null;
            if (user is null) return Results.Redirect("/signin?error=link");
            await signIn.SignInAsync(user, isPersistent: true);
            return Results.Redirect("/");
        });

        group.MapPost("/token", async ([FromForm] string? token, [FromForm] string? returnUrl, RunfoldDbContext db,
            SignInManager<RunfoldUser> signIn, CancellationToken ct) =>
        {
            if (string.IsNullOrWhiteSpace(token)) return Results.Redirect("/signin?error=empty");
            var hash = Secrets.Hash(token.Trim());
            var user = await db.ApiTokens.Where(t => t.TokenHash == hash && t.RevokedAt == null)
                .Select(t => t.User).FirstOrDefaultAsync(ct);
            if (user is null || await signIn.UserManager.IsLockedOutAsync(user)) return Results.Redirect("/signin?error=token");
            await signIn.SignInAsync(user, isPersistent: true);
            return Results.LocalRedirect(IsLocal(returnUrl) ? returnUrl! : "/");
        });

        group.MapPost("/signout", async (SignInManager<RunfoldUser> signIn) =>
        {
            await signIn.SignOutAsync();
            return Results.Redirect("/signin");
        });
        return app;
    }

    private static bool IsLocal(string? url) =>
        !string.IsNullOrEmpty(url) && url.StartsWith('/') && !url.StartsWith("//", StringComparison.Ordinal) && !url.StartsWith("/\\", StringComparison.Ordinal);
}
