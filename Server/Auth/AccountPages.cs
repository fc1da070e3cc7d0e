using Runfold.Server.Hosting;
using Runfold.Shared.Studies;

namespace Runfold.Server.Auth;

/// <summary>The account page's operations, through the same service as the HTTP API.</summary>
public sealed class AccountPages(PageCalls calls) : IAccountService
{
    public Task<Outcome<AccountDto>> GetAsync(CancellationToken cancellationToken = default) =>
        calls.RunAsync<AccountService, AccountDto>((s, caller) => s.GetAsync(caller, cancellationToken));

    public Task<Outcome<ApiTokenCreated>> CreateTokenAsync(string name, CancellationToken cancellationToken = default) =>
        calls.RunAsync<AccountService, ApiTokenCreated>((s, caller) => s.CreateTokenAsync(caller, new TokenRequest(name), cancellationToken));

    public Task<Outcome<ApiTokenDto>> RevokeTokenAsync(int tokenId, CancellationToken cancellationToken = default) =>
        calls.RunAsync<AccountService, ApiTokenDto>((s, caller) => s.RevokeTokenAsync(caller, tokenId, cancellationToken));

    public Task<Outcome<AccountDto>> ChangePasswordAsync(PasswordChange change, CancellationToken cancellationToken = default) =>
        calls.RunAsync<AccountService, AccountDto>((s, caller) => s.ChangePasswordAsync(caller, change, cancellationToken));
}
