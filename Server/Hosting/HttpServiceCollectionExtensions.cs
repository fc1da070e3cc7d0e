using Runfold.Shared.Studies;

namespace Runfold.Server.Hosting;

public static class HttpServiceCollectionExtensions
{
    /// <summary>JSON conventions, problem details for every error, and the OpenAPI document.</summary>
    public static IServiceCollection AddRunfoldHttp(this IServiceCollection services)
    {
        services.ConfigureHttpJsonOptions(o => RunfoldJson.Configure(o.SerializerOptions));
        services.AddProblemDetails(o => o.CustomizeProblemDetails = ProblemSentences.Fill);
        services.AddExceptionHandler<BadRequestExceptionHandler>();
        // Bad bodies throw so BadRequestExceptionHandler can say where the body went wrong.
        services.Configure<Microsoft.AspNetCore.Routing.RouteHandlerOptions>(o => o.ThrowOnBadRequest = true);
        services.AddOpenApi(o => o.AddDocumentTransformer<BearerSecurityTransformer>());
        return services;
    }
}
