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
        services.AddScoped<MembershipService>();
        services.AddScoped<ActivityFeed>();
        services.AddSingleton<StudyChangeHub>();
        services.AddSingleton<IStudyChangeNotifier>(sp => sp.GetRequiredService<StudyChangeHub>());
        services.AddSingleton<IStudyUpdates>(sp => sp.GetRequiredService<StudyChangeHub>());
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

        group.MapPatch("/{id:int}", async (int id, StudyEdit? edit, ClaimsPrincipal user, MembershipService team, CancellationToken ct) =>
                (await team.EditAsync(Caller.From(user)!, id, edit, ct)).ToResult())
            .WithSummary("Lead only: change the study's name, description or lease length (leaseHours, 24 by default).")
            .Produces<StudyDetail>()
            .ProducesValidationProblem()
            .ProducesProblem(StatusCodes.Status403Forbidden);

        group.MapGet("/{id:int}/activity", async (int id, long? before, int? limit, ClaimsPrincipal user, ActivityFeed feed, CancellationToken ct) =>
                (await feed.ListAsync(Caller.From(user)!, id, before, limit ?? 100, ct)).ToResult())
            .WithSummary("The study's activity feed, newest first: who did what and when, from the UI, an API token or the server. Page with ?before=<id>.")
            .Produces<IReadOnlyList<ActivityDto>>();

        group.MapGet("/{id:int}/members", async (int id, ClaimsPrincipal user, MembershipService team, CancellationToken ct) =>
                (await team.ListMembersAsync(Caller.From(user)!, id, ct)).ToResult())
            .WithSummary("The study's members and their roles.")
            .Produces<IReadOnlyList<StudyMemberDto>>();

        group.MapPut("/{id:int}/members/{userName}", async (int id, string userName, MemberRoleRequest? request, ClaimsPrincipal user,
                MembershipService team, CancellationToken ct) =>
                (await team.SetRoleAsync(Caller.From(user)!, id, userName, request?.Role ?? (StudyRole)(-1), ct)).ToResult())
            .WithSummary("Lead only: add an existing account to the study with a role (lead, analyst, viewer), or change its role.")
            .Produces<StudyMemberDto>()
            .ProducesProblem(StatusCodes.Status403Forbidden);

        group.MapDelete("/{id:int}/members/{userName}", async (int id, string userName, ClaimsPrincipal user, MembershipService team, CancellationToken ct) =>
                (await team.RemoveAsync(Caller.From(user)!, id, userName, ct)).ToResult(_ => TypedResults.NoContent()))
            .WithSummary("Lead only: remove a member (not the last lead).")
            .Produces(StatusCodes.Status204NoContent);

        group.MapPost("/{id:int}/invitations", async (int id, InvitationRequest? request, ClaimsPrincipal user, MembershipService team, CancellationToken ct) =>
                (await team.InviteAsync(Caller.From(user)!, id, request, ct)).ToResult(i => TypedResults.Created(i.Path, i)))
            .WithSummary("Lead only: a one-time invitation link (7 days) that adds whoever accepts it with the role; the code is shown once.")
            .Produces<InvitationCreated>(StatusCodes.Status201Created);

        group.MapGet("/{id:int}/invitations", async (int id, ClaimsPrincipal user, MembershipService team, CancellationToken ct) =>
                (await team.ListInvitationsAsync(Caller.From(user)!, id, ct)).ToResult())
            .WithSummary("Lead only: pending invitations.")
            .Produces<IReadOnlyList<InvitationDto>>();

        group.MapDelete("/{id:int}/invitations/{invitationId:int}", async (int id, int invitationId, ClaimsPrincipal user, MembershipService team, CancellationToken ct) =>
                (await team.RevokeInvitationAsync(Caller.From(user)!, id, invitationId, ct)).ToResult(_ => TypedResults.NoContent()))
            .WithSummary("Lead only: revoke a pending invitation.")
            .Produces(StatusCodes.Status204NoContent);
        return app;
    }
}
