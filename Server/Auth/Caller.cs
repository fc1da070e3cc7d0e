using System.Security.Claims;

namespace Runfold.Server.Auth;

/// <summary>Who is asking, as the services see it: the user, whether they are the admin, and the API token the
/// request came through (null from the UI).</summary>
public sealed record Caller(Guid UserId, string UserName, bool IsAdmin, int? ApiTokenId)
{
    public const string AdminClaim = "runfold:admin";
    public const string TokenClaim = "runfold:token";

    /// <summary>"api" when the request came with a token, else "ui": recorded with every audit event.</summary>
    public string Source => ApiTokenId is null ? "ui" : "api";

    public static Caller? From(ClaimsPrincipal? principal)
    {
        if (principal?.Identity?.IsAuthenticated != true) return null;
        var id = principal.FindFirstValue(ClaimTypes.NameIdentifier);
        if (!Guid.TryParse(id, out var userId)) return null;
        var token = principal.FindFirstValue(TokenClaim);
        return new Caller(
            userId,
            principal.Identity.Name ?? "",
            principal.HasClaim(AdminClaim, "true"),
            int.TryParse(token, out var tokenId) ? tokenId : null);
    }

    public static ClaimsPrincipal Principal(Guid userId, string userName, bool isAdmin, int? tokenId, string scheme)
    {
        var claims = new List<Claim>
        {
            new(ClaimTypes.NameIdentifier, userId.ToString()),
            new(ClaimTypes.Name, userName),
        };
        if (isAdmin) claims.Add(new Claim(AdminClaim, "true"));
        if (tokenId is { } t) claims.Add(new Claim(TokenClaim, t.ToString(System.Globalization.CultureInfo.InvariantCulture)));
        return new ClaimsPrincipal(new ClaimsIdentity(claims, scheme));
    }
}
