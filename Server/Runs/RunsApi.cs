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
        services.AddScoped<RunClaims>();
        services.AddScoped<RunProgressQueries>();
        services.AddSingleton<FactorSpaces>();
        services.AddSingleton<LeaseSweeper>();
        services.AddHostedService<LeaseSweepService>();
        return services;
    }

    public static IEndpointRouteBuilder MapRunsApi(this IEndpointRouteBuilder app)
    {
        var study = app.MapGroup("/api/studies/{id:int}").RequireAuthorization().WithTags("Runs");

        study.MapGet("/runs", async (int id, string? state, ClaimsPrincipal user, RunQueries runs, CancellationToken ct) =>
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

        study.MapPost("/claims", async (int id, ClaimRequest? request, ClaimsPrincipal user, RunClaims claims, CancellationToken ct) =>
                (await claims.ClaimAsync(Caller.From(user)!, id, request, ct)).ToResult())
            .WithSummary("Claim up to `count` of the lowest-numbered open runs, with a lease (the study's length unless `leaseHours` is given). " +
                         "Answers with the runs now yours: fewer when fewer are open, none when the study has no open run. Never hands one run to two callers.")
            .Produces<IReadOnlyList<RunDto>>()
            .ProducesValidationProblem()
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound);

        study.MapPost("/assignments", async (int id, AssignRequest? request, ClaimsPrincipal user, RunClaims claims, CancellationToken ct) =>
                (await claims.AssignAsync(Caller.From(user)!, id, request, ct)).ToResult())
            .WithSummary("Lead only: hand open runs (by number) to a member with the analyst or lead role, all or none.")
            .Produces<IReadOnlyList<RunDto>>()
            .ProducesValidationProblem()
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status409Conflict);

        var run = app.MapGroup("/api/runs/{id:int}").RequireAuthorization().WithTags("Runs");

        run.MapPost("/heartbeat", async (int id, ClaimsPrincipal user, RunClaims claims, CancellationToken ct) =>
                (await claims.HeartbeatAsync(Caller.From(user)!, id, ct)).ToResult())
            .WithSummary("Extend your lease on a run by its length from now; 409 when you no longer hold the claim.")
            .Produces<HeartbeatAnswer>()
            .ProducesProblem(StatusCodes.Status409Conflict)
            .ProducesProblem(StatusCodes.Status404NotFound);

        run.MapPost("/release", async (int id, ClaimsPrincipal user, RunClaims claims, CancellationToken ct) =>
                (await claims.ReleaseAsync(Caller.From(user)!, id, ct)).ToResult(_ => TypedResults.NoContent()))
            .WithSummary("Return a claimed run to the open pool: your own claim, or (lead) anyone's.")
            .Produces(StatusCodes.Status204NoContent)
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status409Conflict);
        return app;
    }
}
