namespace Runfold.Server.Hosting;

/// <summary>Security headers on every answer. The pages get a content security policy that allows only this
/// server's own scripts (inline styles are allowed: components set widths with style attributes); the API
/// reference page, a third-party bundle, keeps its own.</summary>
public static class SecurityHeaders
{
    public const string ContentSecurityPolicy =
        "default-src 'self'; script-src 'self'; style-src 'self' 'unsafe-inline'; img-src 'self' data: blob:; " +
        "font-src 'self' data:; connect-src 'self'; frame-ancestors 'none'; base-uri 'self'; form-action 'self'; object-src 'none'";

    public static IApplicationBuilder UseRunfoldSecurityHeaders(this IApplicationBuilder app) => app.Use(async (context, next) =>
    {
        context.Response.OnStarting(() =>
        {
            var headers = context.Response.Headers;
            headers.XContentTypeOptions = "nosniff";
            headers.XFrameOptions = "DENY";
            headers["Referrer-Policy"] = "same-origin";
            headers["Permissions-Policy"] = "camera=(), microphone=(), geolocation=()";
            headers["Cross-Origin-Opener-Policy"] = "same-origin";
            if (!context.Request.Path.StartsWithSegments("/api-docs"))
                headers.ContentSecurityPolicy = ContentSecurityPolicy;
            // A share link's page is not kept either: once revoked, it must not come back from a cache.
            if (context.Request.Path.StartsWithSegments("/api") || context.Request.Path.StartsWithSegments("/auth")
                || context.Request.Path.StartsWithSegments("/shared"))
                headers.CacheControl = "no-store";
            return Task.CompletedTask;
        });
        await next();
    });
}
