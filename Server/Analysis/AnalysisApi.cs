using System.Security.Claims;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Hosting;
using Runfold.Server.Live;
using Runfold.Shared.Studies;

namespace Runfold.Server.Analysis;

public static class AnalysisApi
{
    /// <summary>The live analysis: per-study workers (one instance per study: PostgreSQL advisory locks; the
    /// embedded store works in process), the snapshot builder, the fitted models in memory, and the services of the
    /// API and pages. Needs <see cref="LiveApi.AddLive"/>.</summary>
    public static IServiceCollection AddAnalysis(this IServiceCollection services, RunfoldSettings settings)
    {
        ArgumentNullException.ThrowIfNull(settings);
        services.AddSingleton(new AnalysisOptions { Debounce = settings.AnalysisDebounce, MaxWait = settings.AnalysisMaxWait });
        if (settings.Provider == StorageProvider.Postgres) services.AddSingleton<IAnalysisLocks, PostgresAnalysisLocks>();
        else services.AddSingleton<IAnalysisLocks, InProcessAnalysisLocks>();
        // The stages after the fits, in this order: sensitivity, then the candidates.
        services.AddSingleton<IAnalysisStage, SensitivityStage>();
        services.AddSingleton<IAnalysisStage, CandidatesStage>();
        services.AddSingleton<SnapshotBuilder>();
        services.AddSingleton<FittedModelCache>();
        services.AddSingleton<AnalysisCoordinator>();
        services.AddHostedService(sp => sp.GetRequiredService<AnalysisCoordinator>());
        services.AddScoped<StudyAnalysisService>();
        services.AddScoped<IStudyAnalysis, AnalysisPages>();
        return services;
    }

    public static IEndpointRouteBuilder MapAnalysisApi(this IEndpointRouteBuilder app)
    {
        var group = app.MapGroup("/api/studies/{id:int}").RequireAuthorization().WithTags("Analysis");

        group.MapGet("/analysis", async (int id, ClaimsPrincipal user, StudyAnalysisService analysis, CancellationToken ct) =>
                (await analysis.GetLatestAsync(Caller.From(user)!, id, ct)).ToResult(s => s is null
                    ? OutcomeResults.Problem(StatusCodes.Status404NotFound, "No analysis yet",
                        $"Study {id} has no analysis snapshot yet: the first is computed as soon as a result is stored.")
                    : TypedResults.Ok(s)))
            .WithSummary("The latest analysis snapshot: per response the chosen surrogate and its fit check, with the result-set version and the number of done runs it is based on.")
            .Produces<AnalysisSnapshotDto>()
            .ProducesProblem(StatusCodes.Status404NotFound);

        group.MapGet("/analysis/history", async (int id, ClaimsPrincipal user, StudyAnalysisService analysis, CancellationToken ct) =>
                (await analysis.GetHistoryAsync(Caller.From(user)!, id, ct)).ToResult())
            .WithSummary("Every snapshot's point of the convergence view, oldest first: runs it was based on, each response's cross-validated NRMSE.")
            .Produces<IReadOnlyList<AnalysisHistoryPointDto>>();

        group.MapPost("/predict", async (int id, PredictRequest? request, ClaimsPrincipal user, StudyAnalysisService analysis, CancellationToken ct) =>
                (await analysis.PredictAsync(Caller.From(user)!, id, request, ct)).ToResult())
            .WithSummary("Predictions of the latest snapshot's surrogates: points in natural units by factor name in, per point each response's mean and standard deviation out.")
            .Produces<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>()
            .ProducesValidationProblem()
            .ProducesValidationProblem(StatusCodes.Status422UnprocessableEntity);

        group.MapPost("/waves", async (int id, WaveRequest? request, ClaimsPrincipal user, StudyAnalysisService analysis, CancellationToken ct) =>
                (await analysis.AddWaveAsync(Caller.From(user)!, id, request, ct)).ToResult(runs => TypedResults.Created($"/api/studies/{id}/runs", runs)))
            .WithSummary("Lead only: add a wave of runs. kind \"infill\" proposes count runs from the latest snapshot's surrogates (criterion expectedImprovement, variance or maximin; optionally for one response); \"augment\" places count space-filling runs by maximin distance to the study's runs; \"verify\" adds a run at a candidate's setting (candidateRank, or the best count unverified candidates) and keeps its prediction for the comparison.")
            .Produces<IReadOnlyList<RunDto>>(StatusCodes.Status201Created)
            .ProducesValidationProblem()
            .ProducesValidationProblem(StatusCodes.Status422UnprocessableEntity)
            .ProducesProblem(StatusCodes.Status403Forbidden);
        return app;
    }
}
