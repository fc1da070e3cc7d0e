using System.Security.Claims;
using Microsoft.AspNetCore.Authentication.OpenIdConnect;
using Microsoft.AspNetCore.Identity;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Server.Hosting;
using Runfold.Server.Studies;

namespace Runfold.Server.Auth;

/// <summary>
/// Optional sign-in with the company's identity provider (OpenID Connect, code flow with PKCE), configured by
/// RUNFOLD_OIDC_* settings. A person signing in for the first time gets an account with no study roles; a lead
/// then adds them to studies.
/// </summary>
public sealed class SingleSignOn(SignInManager<RunfoldUser> signIn, AccountService accounts, RunfoldDbContext db, TimeProvider time)
{
    public const string Scheme = "oidc";

    public static void Configure(Microsoft.AspNetCore.Authentication.AuthenticationBuilder builder, SingleSignOnSettings settings)
    {
        builder.AddOpenIdConnect(Scheme, settings.Name, o =>
        {
            o.Authority = settings.Authority;
            o.ClientId = settings.ClientId;
            o.ClientSecret = settings.ClientSecret;
            o.ResponseType = "code";
            o.UsePkce = true;
            o.SignInScheme = IdentityConstants.ExternalScheme;
            o.CallbackPath = "/auth/external/signin-oidc";
            o.SignedOutCallbackPath = "/auth/external/signout-oidc";
            o.Scope.Clear();
            foreach (var scope in new[] { "openid", "profile", "email" }) o.Scope.Add(scope);
            o.MapInboundClaims = false;
            o.SaveTokens = false;
            o.RequireHttpsMetadata = settings.Authority.StartsWith("https://", StringComparison.OrdinalIgnoreCase);
        });
    }

    /// <summary>The account of the person the identity provider just signed in, created on first sign-in.</summary>
    public async Task<RunfoldUser?> ResolveAsync()
    {
        var info = await signIn.GetExternalLoginInfoAsync();
        if (info is null) return null;
        var users = signIn.UserManager;
        var user = await users.FindByLoginAsync(info.LoginProvider, info.ProviderKey);
        if (user is null)
        {
            var name = info.Principal.FindFirstValue("preferred_username") ?? info.Principal.FindFirstValue("email") ?? info.ProviderKey;
            var (created, _) = await accounts.CreateAsync(await FreeUserNameAsync(users, name), info.Principal.FindFirstValue("name"), null);
            if (created is null) return null;
            var linked = await users.AddLoginAsync(created, info);
            if (!linked.Succeeded) return null;
            db.AuditEvents.Add(Audit.Event(null, null, null, "account.created", $"{created.UserName} signed in with {info.ProviderDisplayName ?? "single sign-on"} for the first time", time.GetUtcNow()));
            await db.SaveChangesAsync();
            user = created;
        }
        await Microsoft.AspNetCore.Authentication.AuthenticationHttpContextExtensions.SignOutAsync(signIn.Context, IdentityConstants.ExternalScheme);
        return await users.IsLockedOutAsync(user) ? null : user;
    }

    private static async Task<string> FreeUserNameAsync(UserManager<RunfoldUser> users, string wanted)
    {
        var name = new string([.. wanted.Where(c => char.IsLetterOrDigit(c) || c is '.' or '_' or '-' or '@')]);
        if (name.Length == 0) name = "user";
        var candidate = name;
        for (var i = 2; await users.FindByNameAsync(candidate) is not null; i++) candidate = $"{name}{i}";
        return candidate;
    }
}
