using System.Security.Claims;
using Runfold.Server.Auth;
using Runfold.Server.Hosting;
using Runfold.Shared.Studies;

namespace Runfold.Server.Studies;

public static class StudiesApi
{
    public static IServiceCollection AddStudies(this IServiceCollection services)
    {
        services.AddScoped<StudyService>();
        return services;
    }

    public static IEndpointRouteBuilder MapStudiesApi(this IEndpointRouteBuilder app)
    {
        var group = app.MapGroup("/api/studies").RequireAuthorization().WithTags("Studies");

        group.MapGet("/", async (ClaimsPrincipal user, StudyService studies, CancellationToken ct) =>
                TypedResults.Ok(await studies.ListAsync(Caller.From(user)!, ct)))
            .WithSummary("The studies you are a member of, with run counts by state.");

        group.MapPost("/", async (CreateStudyRequest? request, ClaimsPrincipal user, StudyService studies, CancellationToken ct) =>
                (await studies.CreateAsync(Caller.From(user)!, request, ct))
                    .ToResult(s => TypedResults.Created($"/api/studies/{s.Id}", s)))
            .WithSummary("Create a study: factors, responses and a design; answers with the study and its wave-1 runs.")
            .Produces<StudyDetail>(StatusCodes.Status201Created)
            .ProducesValidationProblem()
            .ProducesValidationProblem(StatusCodes.Status422UnprocessableEntity)
            .ProducesProblem(StatusCodes.Status403Forbidden);

        group.MapGet("/{id:int}", async (int id, ClaimsPrincipal user, StudyService studies, CancellationToken ct) =>
                (await studies.GetAsync(Caller.From(user)!, id, ct)).ToResult())
            .WithSummary("A study with its factors, responses, run counts and members.")
            .Produces<StudyDetail>()
            .ProducesProblem(StatusCodes.Status404NotFound);
        return app;
    }
}
