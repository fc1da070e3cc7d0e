using System.Text.Encodings.Web;
using Microsoft.AspNetCore.Authentication;
using Microsoft.AspNetCore.Mvc;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Options;
using Runfold.Server.Data;

namespace Runfold.Server.Auth;

/// <summary>
/// <c>Authorization: Bearer rf_…</c>: looks the token up by its hash; revoked tokens and tokens of locked-out
/// users are refused. A failed challenge answers 401 problem details.
/// </summary>
public sealed class ApiTokenAuthenticationHandler(
    IOptionsMonitor<AuthenticationSchemeOptions> options,
    ILoggerFactory logger,
    UrlEncoder encoder,
    IDbContextFactory<RunfoldDbContext> contexts,
    TimeProvider time,
    IProblemDetailsService problems)
    : AuthenticationHandler<AuthenticationSchemeOptions>(options, logger, encoder)
{
    public const string SchemeName = "Bearer";

    /// <summary>Last-used times are written at most this often per token, not on every request.</summary>
    private static readonly TimeSpan LastUsedResolution = TimeSpan.FromMinutes(1);

    protected override async Task<AuthenticateResult> HandleAuthenticateAsync()
    {
        string? header = Request.Headers.Authorization;
        if (string.IsNullOrEmpty(header) || !header.StartsWith("Bearer ", StringComparison.OrdinalIgnoreCase))
            return AuthenticateResult.NoResult();
        var token = header["Bearer ".Length..].Trim();
        if (token.Length == 0) return AuthenticateResult.Fail("The bearer token is empty.");

        var hash = Secrets.Hash(token);
        await using var db = await contexts.CreateDbContextAsync(Context.RequestAborted);
        var found = await db.ApiTokens.AsNoTracking()
            .Where(t => t.TokenHash == hash && t.RevokedAt == null)
            .Select(t => new { t.Id, t.UserId, t.LastUsedAt, t.User!.UserName, t.User.IsAdmin, t.User.LockoutEnd })
            .FirstOrDefaultAsync(Context.RequestAborted);
        var now = time.GetUtcNow();
        if (found is null) return AuthenticateResult.Fail("The API token is unknown or revoked.");
        if (found.LockoutEnd is { } lockout && lockout > now) return AuthenticateResult.Fail("The account is locked.");

        if (found.LastUsedAt is null || now - found.LastUsedAt.Value > LastUsedResolution)
            await db.ApiTokens.Where(t => t.Id == found.Id)
                .ExecuteUpdateAsync(s => s.SetProperty(t => t.LastUsedAt, now), Context.RequestAborted);

        var principal = Caller.Principal(found.UserId, found.UserName ?? "", found.IsAdmin, found.Id, SchemeName);
        return AuthenticateResult.Success(new AuthenticationTicket(principal, SchemeName));
    }

    protected override async Task HandleChallengeAsync(AuthenticationProperties properties)
    {
        Response.StatusCode = StatusCodes.Status401Unauthorized;
        Response.Headers.WWWAuthenticate = "Bearer";
        var failure = (await HandleAuthenticateOnceSafeAsync()).Failure?.Message;
        await problems.WriteAsync(new ProblemDetailsContext
        {
            HttpContext = Context,
            ProblemDetails = new ProblemDetails
            {
                Status = StatusCodes.Status401Unauthorized,
                Title = "Sign-in required",
                Detail = failure is null
                    ? "This needs an API token: send the header 'Authorization: Bearer <token>'. Create a token on your account page."
                    : failure + " Send a valid token in the header 'Authorization: Bearer <token>'.",
            },
        });
    }

    protected override async Task HandleForbiddenAsync(AuthenticationProperties properties)
    {
        Response.StatusCode = StatusCodes.Status403Forbidden;
        await problems.WriteAsync(new ProblemDetailsContext
        {
            HttpContext = Context,
            ProblemDetails = new ProblemDetails
            {
                Status = StatusCodes.Status403Forbidden,
                Title = "Not allowed",
                Detail = "Your account may not do this.",
            },
        });
    }
}
