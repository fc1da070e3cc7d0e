using System.Security.Claims;
using Microsoft.AspNetCore.Authentication;
using Microsoft.AspNetCore.Identity;
using Microsoft.Extensions.Options;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Server.Hosting;
using Runfold.Shared.Studies;

namespace Runfold.Server.Auth;

public static class AuthServiceCollectionExtensions
{
    /// <summary>The scheme that picks the real one per request: the API token when an Authorization header is
    /// sent, else the sign-in cookie; a request to /api without either is challenged as an API call (401).</summary>
    public const string SelectorScheme = "Runfold";

    public static IServiceCollection AddRunfoldAuth(this IServiceCollection services, RunfoldSettings settings)
    {
        ArgumentNullException.ThrowIfNull(settings);
        services.AddIdentityCore<RunfoldUser>(o =>
            {
                o.User.RequireUniqueEmail = false;
                o.Lockout.MaxFailedAccessAttempts = 5;
                o.Lockout.DefaultLockoutTimeSpan = TimeSpan.FromMinutes(15);
                o.Password.RequiredLength = 10;
            })
            .AddEntityFrameworkStores<RunfoldDbContext>()
            .AddSignInManager()
            .AddClaimsPrincipalFactory<RunfoldClaimsPrincipalFactory>()
            .AddDefaultTokenProviders();

        var authentication = services.AddAuthentication(o =>
            {
                o.DefaultScheme = SelectorScheme;
                o.DefaultChallengeScheme = SelectorScheme;
            })
            .AddPolicyScheme(SelectorScheme, "API token or sign-in cookie", o => o.ForwardDefaultSelector = SelectScheme)
            .AddScheme<AuthenticationSchemeOptions, ApiTokenAuthenticationHandler>(ApiTokenAuthenticationHandler.SchemeName, null);
        authentication.AddIdentityCookies();
        if (settings.SingleSignOn is { } sso) SingleSignOn.Configure(authentication, sso);
        services.AddSingleton(new SignInChoices(Password: true, SingleSignOn: settings.SingleSignOn?.Name));

        services.ConfigureApplicationCookie(o =>
        {
            o.Cookie.Name = "runfold.auth";
            o.Cookie.HttpOnly = true;
            o.Cookie.SameSite = SameSiteMode.Lax;
            o.LoginPath = "/signin";
            o.AccessDeniedPath = "/signin";
            o.ExpireTimeSpan = TimeSpan.FromDays(14);
            o.SlidingExpiration = true;
        });

        services.AddAuthorization();
        services.AddCascadingAuthenticationState();
        services.AddScoped<SignInLinks>();
        services.AddScoped<AdminBootstrap>();
        services.AddScoped<AccountService>();
        services.AddScoped<Invitations>();
        services.AddScoped<IInvitationDirectory>(sp => sp.GetRequiredService<Invitations>());
        services.AddScoped<SingleSignOn>();
        return services;
    }

    private static string SelectScheme(HttpContext context)
    {
        if (context.Request.Headers.Authorization.Count > 0) return ApiTokenAuthenticationHandler.SchemeName;
        if (context.Request.Cookies.ContainsKey("runfold.auth")) return IdentityConstants.ApplicationScheme;
        return context.Request.Path.StartsWithSegments("/api")
            ? ApiTokenAuthenticationHandler.SchemeName
            : IdentityConstants.ApplicationScheme;
    }
}

/// <summary>Adds the admin flag to the cookie principal so both schemes carry the same claims.</summary>
public sealed class RunfoldClaimsPrincipalFactory(UserManager<RunfoldUser> users, IOptions<IdentityOptions> options)
    : UserClaimsPrincipalFactory<RunfoldUser>(users, options)
{
    protected override async Task<ClaimsIdentity> GenerateClaimsAsync(RunfoldUser user)
    {
        ArgumentNullException.ThrowIfNull(user);
        var identity = await base.GenerateClaimsAsync(user);
        if (user.IsAdmin) identity.AddClaim(new Claim(Caller.AdminClaim, "true"));
        return identity;
    }
}
