using System.Globalization;
using System.Threading.RateLimiting;
using Microsoft.AspNetCore.Mvc;
using Microsoft.AspNetCore.RateLimiting;
using Runfold.Server.Auth;

namespace Runfold.Server.Hosting;

/// <summary>
/// Rate limits: sign-in attempts per client address (the <see cref="SignIn"/> policy on /auth), and API requests
/// per token (every request with an Authorization header). A refused request gets 429 problem details with
/// Retry-After. Partitions are keyed by a hash of the token, so the token itself is never held as a key.
/// </summary>
public static class RateLimits
{
    public const string SignIn = "sign-in";

    public static IServiceCollection AddRunfoldRateLimits(this IServiceCollection services, RunfoldSettings settings)
    {
        ArgumentNullException.ThrowIfNull(settings);
        services.AddRateLimiter(o =>
        {
            o.RejectionStatusCode = StatusCodes.Status429TooManyRequests;
            o.AddPolicy(SignIn, http => RateLimitPartition.GetFixedWindowLimiter(
                http.Connection.RemoteIpAddress?.ToString() ?? "local",
                _ => new FixedWindowRateLimiterOptions { PermitLimit = settings.SignInPerMinute, Window = TimeSpan.FromMinutes(1), QueueLimit = 0 }));
            var perSecond = Math.Max(1, settings.TokenRequestsPerMinute / 60);
            o.GlobalLimiter = PartitionedRateLimiter.Create<HttpContext, string>(http =>
            {
                string? header = http.Request.Headers.Authorization;
                if (string.IsNullOrEmpty(header)) return RateLimitPartition.GetNoLimiter("");
                return RateLimitPartition.GetTokenBucketLimiter(Secrets.Hash(header)[..32], _ => new TokenBucketRateLimiterOptions
                {
                    TokenLimit = settings.TokenRequestsPerMinute,
                    TokensPerPeriod = perSecond,
                    ReplenishmentPeriod = TimeSpan.FromSeconds(1),
                    QueueLimit = 0,
                    AutoReplenishment = true,
                });
            });
            o.OnRejected = async (context, cancellationToken) =>
            {
                var http = context.HttpContext;
                var retry = context.Lease.TryGetMetadata(MetadataName.RetryAfter, out var after) ? after : TimeSpan.FromMinutes(1);
                http.Response.Headers.RetryAfter = Math.Ceiling(retry.TotalSeconds).ToString(CultureInfo.InvariantCulture);
                var signIn = http.Request.Path.StartsWithSegments("/auth");
                await http.RequestServices.GetRequiredService<IProblemDetailsService>().WriteAsync(new ProblemDetailsContext
                {
                    HttpContext = http,
                    ProblemDetails = new ProblemDetails
                    {
                        Status = StatusCodes.Status429TooManyRequests,
                        Title = "Too many requests",
                        Detail = signIn
                            ? $"Too many sign-in attempts from this address; wait {Math.Ceiling(retry.TotalSeconds)} seconds and try again."
                            : $"This API token sent more than {settings.TokenRequestsPerMinute} requests a minute; wait {Math.Ceiling(retry.TotalSeconds)} seconds (Retry-After) and slow down.",
                    },
                });
            };
        });
        return services;
    }
}
