using Microsoft.AspNetCore.OpenApi;
using Microsoft.OpenApi;

namespace Runfold.Server.Hosting;

/// <summary>Declares the API token in the OpenAPI document so the reference UI can send it.</summary>
internal sealed class BearerSecurityTransformer : IOpenApiDocumentTransformer
{
    public Task TransformAsync(OpenApiDocument document, OpenApiDocumentTransformerContext context, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(document);
        document.Info = new OpenApiInfo
        {
            Title = "Runfold API",
            Version = "v1",
            Description = "Studies, runs, claims and results for cluster jobs and scripts. Send 'Authorization: Bearer <token>'. " +
                          "Every error is RFC 9457 problem details with a sentence in 'detail'.",
        };
        document.Components ??= new OpenApiComponents();
        document.Components.SecuritySchemes ??= new Dictionary<string, IOpenApiSecurityScheme>();
        document.Components.SecuritySchemes["Bearer"] = new OpenApiSecurityScheme
        {
            Type = SecuritySchemeType.Http,
            Scheme = "bearer",
            Description = "A personal API token (rf_…).",
        };
        document.Security = [new OpenApiSecurityRequirement { [new OpenApiSecuritySchemeReference("Bearer", document)] = [] }];
        return Task.CompletedTask;
    }
}
