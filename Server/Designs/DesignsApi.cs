using Runfold.Server.Hosting;
using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Server.Designs;

/// <summary>Design previews: the runs and quality figures a design request would give, before a study is created.
/// Nothing is stored.</summary>
public static class DesignsApi
{
    public static IServiceCollection AddDesigns(this IServiceCollection services)
    {
        services.AddSingleton(sp => new DesignLimits(sp.GetRequiredService<RunfoldSettings>().MaxRuns));
        return services;
    }

    public static IEndpointRouteBuilder MapDesignsApi(this IEndpointRouteBuilder app)
    {
        var group = app.MapGroup("/api/designs").RequireAuthorization().WithTags("Designs");

        group.MapPost("/preview", (DesignPreviewRequest? request, DesignLimits limits) =>
                DesignPreviews.Preview(request, limits).ToResult())
            .WithSummary("Preview a design: its runs in natural units and its quality metrics (run count, levels, minimum " +
                         "distance, centered L2 discrepancy, largest correlation, D-efficiency and condition number), the " +
                         "fraction's resolution and aliases, whether a central composite stays inside the ranges, and the runs " +
                         "that break constraints. Nothing is stored.")
            .Produces<DesignPreview>()
            .ProducesValidationProblem()
            .ProducesValidationProblem(StatusCodes.Status422UnprocessableEntity);
        return app;
    }
}
