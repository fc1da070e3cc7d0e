using System.Security.Claims;
using Microsoft.AspNetCore.Antiforgery;
using Microsoft.AspNetCore.Authentication;
using Microsoft.AspNetCore.Identity;
using Microsoft.AspNetCore.Mvc;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Server.Hosting;
using Http = Microsoft.AspNetCore.Http;

namespace Runfold.Server.Auth;

/// <summary>
/// Browser sign-in, each setting the sign-in cookie: a password (with lockout after repeated failures), a
/// one-time link, an API token pasted into the sign-in page, or the company's single sign-on when configured.
/// Also accepting an invitation. Every form is checked for its antiforgery token and every attempt is rate limited.
/// </summary>
public static class SignInApi
{
    public static IEndpointRouteBuilder MapSignInApi(this IEndpointRouteBuilder app)
    {
        var group = app.MapGroup("/auth").ExcludeFromDescription().RequireRateLimiting(RateLimits.SignIn);

        group.MapPost("/password", async ([FromForm] string? userName, [FromForm] string? password, [FromForm] string? returnUrl,
            SignInManager<RunfoldUser> signIn) =>
        {
            if (string.IsNullOrWhiteSpace(userName) || string.IsNullOrEmpty(password)) return Back("empty-password", returnUrl);
            var result = await signIn.PasswordSignInAsync(userName.Trim(), password, isPersistent: true, lockoutOnFailure: true);
            if (result.IsLockedOut) return Back("locked", returnUrl);
            if (!result.Succeeded) return Back("password", returnUrl);
            return Http.Results.LocalRedirect(IsLocal(returnUrl) ? returnUrl! : "/");
        });

        group.MapGet("/link/{code}", async (string code, SignInLinks links, UserManager<RunfoldUser> users,
            SignInManager<RunfoldUser> signIn, CancellationToken ct) =>
        {
            var userId = await links.RedeemAsync(code, ct);
            var user = userId is { } id ? await users.FindByIdAsync(id.ToString()) : null;
            if (user is null) return Http.Results.Redirect("/signin?error=link");
            await signIn.SignInAsync(user, isPersistent: true);
            return Http.Results.Redirect(user.PasswordHash is null ? "/account" : "/");
        });

        group.MapPost("/token", async ([FromForm] string? token, [FromForm] string? returnUrl, RunfoldDbContext db,
            SignInManager<RunfoldUser> signIn, CancellationToken ct) =>
        {
            if (string.IsNullOrWhiteSpace(token)) return Back("empty", returnUrl);
            var hash = Secrets.Hash(token.Trim());
            var user = await db.ApiTokens.Where(t => t.TokenHash == hash && t.RevokedAt == null)
                .Select(t => t.User).FirstOrDefaultAsync(ct);
            if (user is null || await signIn.UserManager.IsLockedOutAsync(user)) return Back("token", returnUrl);
            await signIn.SignInAsync(user, isPersistent: true);
            return Http.Results.LocalRedirect(IsLocal(returnUrl) ? returnUrl! : "/");
        });

        // No form fields to bind, so the antiforgery check is made here rather than by form binding.
        group.MapPost("/signout", async (HttpContext http, IAntiforgery antiforgery, SignInManager<RunfoldUser> signIn) =>
        {
            if (!await antiforgery.IsRequestValidAsync(http))
                return OutcomeResults.Problem(StatusCodes.Status400BadRequest, "The request is not valid",
                    "The sign-out form is missing its antiforgery token; reload the page and sign out again.");
            await signIn.SignOutAsync();
            return Http.Results.Redirect("/signin");
        }).DisableAntiforgery();

        group.MapPost("/invitations/accept", async ([FromForm] string? code, ClaimsPrincipal user, Invitations invitations, CancellationToken ct) =>
        {
            if (Caller.From(user) is not { } caller) return Http.Results.Redirect($"/invitations/{Uri.EscapeDataString(code ?? "")}");
            var accepted = await invitations.AcceptAsync(caller, code ?? "", ct);
            return accepted.IsOk
                ? Http.Results.Redirect($"/studies/{accepted.Value!.StudyId}")
                : Http.Results.Redirect($"/invitations/{Uri.EscapeDataString(code ?? "")}?error=used");
        });

        group.MapPost("/invitations/register", async ([FromForm] string? code, [FromForm] string? userName, [FromForm] string? displayName,
            [FromForm] string? password, Invitations invitations, SignInManager<RunfoldUser> signIn, CancellationToken ct) =>
        {
            var (created, outcome) = await invitations.RegisterAndAcceptAsync(code ?? "", userName, displayName, password, ct);
            if (created is null)
            {
                var reason = outcome.Kind == Shared.Studies.OutcomeKind.NotFound ? "used" : "account";
                var message = outcome.Kind == Shared.Studies.OutcomeKind.NotFound ? "" : "&message=" + Uri.EscapeDataString(outcome.Message ?? "");
                return Http.Results.Redirect($"/invitations/{Uri.EscapeDataString(code ?? "")}?error={reason}{message}");
            }
            await signIn.SignInAsync(created, isPersistent: true);
            return Http.Results.Redirect($"/studies/{outcome.Value!.StudyId}");
        });

        group.MapGet("/external", (string? returnUrl, SignInManager<RunfoldUser> signIn, RunfoldSettings settings) =>
        {
            if (settings.SingleSignOn is null) return Http.Results.Redirect("/signin");
            var back = IsLocal(returnUrl) ? returnUrl! : "/";
            var properties = signIn.ConfigureExternalAuthenticationProperties(SingleSignOn.Scheme, "/auth/external/callback?returnUrl=" + Uri.EscapeDataString(back));
            return Http.Results.Challenge(properties, [SingleSignOn.Scheme]);
        });

        group.MapGet("/external/callback", async (string? returnUrl, SingleSignOn sso, SignInManager<RunfoldUser> signIn) =>
        {
            var user = await sso.ResolveAsync();
            if (user is null) return Http.Results.Redirect("/signin?error=sso");
            await signIn.SignInAsync(user, isPersistent: true, SingleSignOn.Scheme);
            return Http.Results.LocalRedirect(IsLocal(returnUrl) ? returnUrl! : "/");
        });
        return app;
    }

    private static IResult Back(string error, string? returnUrl) =>
        Http.Results.Redirect($"/signin?error={error}" + (IsLocal(returnUrl) ? "&returnUrl=" + Uri.EscapeDataString(returnUrl!) : ""));

    internal static bool IsLocal(string? url) =>
        !string.IsNullOrEmpty(url) && url.StartsWith('/') && !url.StartsWith("//", StringComparison.Ordinal) && !url.StartsWith("/\\", StringComparison.Ordinal);
}
