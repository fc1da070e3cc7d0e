using System.Security.Claims;
using Runfold.Server.Auth;
using Runfold.Server.Hosting;
using Runfold.Shared.Studies;

namespace Runfold.Server.Runs;

public static class RunsApi
{
    public static IServiceCollection AddRuns(this IServiceCollection services)
    {
        services.AddScoped<RunQueries>();
        return services;
    }

    public static IEndpointRouteBuilder MapRunsApi(this IEndpointRouteBuilder app)
    {
        var studyRuns = app.MapGroup("/api/studies/{id:int}/runs").RequireAuthorization().WithTags("Runs");

        studyRuns.MapGet("/", async (int id, string? state, ClaimsPrincipal user, RunQueries runs, CancellationToken ct) =>
            {
                RunState? filter = null;
                if (!string.IsNullOrEmpty(state))
                {
                    if (!Enum.TryParse<RunState>(state, ignoreCase: true, out var parsed) || !Enum.IsDefined(parsed))
                        return OutcomeResults.Problem(StatusCodes.Status400BadRequest, "The request is not valid",
                            $"'{state}' is not a run state; use open, claimed, done or failed.");
                    filter = parsed;
                }
                return (await runs.ListAsync(Caller.From(user)!, id, filter, ct)).ToResult();
            })
            .WithSummary("The runs of a study in run-number order, with factor values and current results; filter with ?state=open|claimed|done|failed.")
            .Produces<IReadOnlyList<RunDto>>()
            .ProducesProblem(StatusCodes.Status404NotFound);
        return app;
    }
}
