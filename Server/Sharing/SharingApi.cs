using System.Security.Claims;
using Runfold.Server.Auth;
using Runfold.Server.Hosting;
using Runfold.Shared.Studies;

namespace Runfold.Server.Sharing;

public static class SharingApi
{
    public static IServiceCollection AddSharing(this IServiceCollection services)
    {
        services.AddSingleton<ShareLinkTokens>();
        services.AddScoped<ShareLinkService>();
        services.AddScoped<IShareLinks, ShareLinkPages>();
        services.AddScoped<ISharedStudies, SharedStudyPages>();
        return services;
    }

    public static IEndpointRouteBuilder MapSharingApi(this IEndpointRouteBuilder app)
    {
        var group = app.MapGroup("/api/studies/{id:int}/share-links").RequireAuthorization().WithTags("Share links");

        group.MapPost("/", async (int id, ShareLinkRequest? request, ClaimsPrincipal user, ShareLinkService links, CancellationToken ct) =>
                (await links.CreateAsync(Caller.From(user)!, id, request, ct)).ToResult(l => TypedResults.Created(l.Path, l)))
            .WithSummary("Lead only: a read-only link to the study's summary for people without an account (managers, reviewers). " +
                         "It works for lifetimeDays (14 by default, at most 90) until revoked; path is /shared/{token}.")
            .Produces<ShareLinkDto>(StatusCodes.Status201Created)
            .ProducesValidationProblem()
            .ProducesProblem(StatusCodes.Status403Forbidden);

        group.MapGet("/", async (int id, ClaimsPrincipal user, ShareLinkService links, CancellationToken ct) =>
                (await links.ListAsync(Caller.From(user)!, id, ct)).ToResult())
            .WithSummary("Lead only: the study's share links, newest first; links that still work carry their path.")
            .Produces<IReadOnlyList<ShareLinkDto>>()
            .ProducesProblem(StatusCodes.Status403Forbidden);

        group.MapDelete("/{linkId:int}", async (int id, int linkId, ClaimsPrincipal user, ShareLinkService links, CancellationToken ct) =>
                (await links.RevokeAsync(Caller.From(user)!, id, linkId, ct)).ToResult(_ => TypedResults.NoContent()))
            .WithSummary("Lead only: revoke a share link; it stops working at once, also on pages already open.")
            .Produces(StatusCodes.Status204NoContent)
            .ProducesProblem(StatusCodes.Status404NotFound);
        return app;
    }
}
