using Microsoft.Extensions.Diagnostics.HealthChecks;
using Runfold.Server.Data;

namespace Runfold.Server.Hosting;

public static class HealthApi
{
    public static IServiceCollection AddRunfoldHealth(this IServiceCollection services)
    {
        services.AddHealthChecks().AddCheck<DatabaseHealthCheck>("database");
        return services;
    }

    /// <summary>GET /health → 200 {status:"healthy"}; 503 {status:"unhealthy"} when the database is unreachable.</summary>
    public static IEndpointRouteBuilder MapHealthApi(this IEndpointRouteBuilder app)
    {
        app.MapHealthChecks("/health", new Microsoft.AspNetCore.Diagnostics.HealthChecks.HealthCheckOptions
        {
            ResponseWriter = (context, report) =>
            {
                context.Response.ContentType = "application/json";
                return context.Response.WriteAsJsonAsync(new { status = report.Status == HealthStatus.Healthy ? "healthy" : "unhealthy" });
            },
        }).WithTags("Health");
        return app;
    }

    private sealed class DatabaseHealthCheck(Microsoft.EntityFrameworkCore.IDbContextFactory<RunfoldDbContext> contexts) : IHealthCheck
    {
        public async Task<HealthCheckResult> CheckHealthAsync(HealthCheckContext context, CancellationToken cancellationToken = default)
        {
            try
            {
                await using var db = await contexts.CreateDbContextAsync(cancellationToken);
                return await db.Database.CanConnectAsync(cancellationToken)
                    ? HealthCheckResult.Healthy()
                    : HealthCheckResult.Unhealthy("The database cannot be reached.");
            }
#pragma warning disable CA1031 // any failure to reach the database means unhealthy
            catch (Exception e)
#pragma warning restore CA1031
            {
                return HealthCheckResult.Unhealthy("The database cannot be reached.", e);
            }
        }
    }
}
