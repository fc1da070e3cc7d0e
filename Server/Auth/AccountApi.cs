using System.Security.Claims;
using Runfold.Server.Hosting;
using Runfold.Shared.Studies;

namespace Runfold.Server.Auth;

/// <summary>The caller's own account and API tokens; accounts for the admin.</summary>
public static class AccountApi
{
    public static IEndpointRouteBuilder MapAccountApi(this IEndpointRouteBuilder app)
    {
        var account = app.MapGroup("/api/account").RequireAuthorization().WithTags("Account");

        account.MapGet("/", async (ClaimsPrincipal user, AccountService accounts, CancellationToken ct) =>
                (await accounts.GetAsync(Caller.From(user)!, ct)).ToResult())
            .WithSummary("Your account and your API tokens (names, first characters, last use; never the tokens themselves).")
            .Produces<AccountDto>();

        account.MapPost("/tokens", async (TokenRequest? request, ClaimsPrincipal user, AccountService accounts, CancellationToken ct) =>
                (await accounts.CreateTokenAsync(Caller.From(user)!, request, ct)).ToResult(t => TypedResults.Created($"/api/account/tokens/{t.Info.Id}", t)))
            .WithSummary("Create a named personal API token. The token is in this answer only; it is stored as a hash.")
            .Produces<ApiTokenCreated>(StatusCodes.Status201Created)
            .ProducesValidationProblem();

        account.MapDelete("/tokens/{tokenId:int}", async (int tokenId, ClaimsPrincipal user, AccountService accounts, CancellationToken ct) =>
                (await accounts.RevokeTokenAsync(Caller.From(user)!, tokenId, ct)).ToResult(_ => TypedResults.NoContent()))
            .WithSummary("Revoke one of your API tokens; it is refused from its next request on.")
            .Produces(StatusCodes.Status204NoContent);

        var users = app.MapGroup("/api/users").RequireAuthorization().WithTags("Account");

        users.MapGet("/", async (ClaimsPrincipal user, AccountService accounts, CancellationToken ct) =>
                (await accounts.ListUsersAsync(Caller.From(user)!, ct)).ToResult())
            .WithSummary("Admin only: every account.")
            .Produces<IReadOnlyList<UserDto>>();

        users.MapPost("/", async (CreateUserRequest? request, ClaimsPrincipal user, AccountService accounts, CancellationToken ct) =>
                (await accounts.CreateUserAsync(Caller.From(user)!, request, ct)).ToResult(u => TypedResults.Created($"/api/users/{u.User.Id}", u)))
            .WithSummary("Admin only: create an account. Without a password, the answer has a one-time sign-in link (signInPath) for the person.")
            .Produces<UserCreated>(StatusCodes.Status201Created)
            .ProducesValidationProblem()
            .ProducesProblem(StatusCodes.Status403Forbidden);
        return app;
    }
}
