using Microsoft.AspNetCore.Components.Authorization;
using Runfold.Server.Auth;
using Runfold.Shared.Studies;

namespace Runfold.Server.Hosting;

/// <summary>
/// How the pages' services call the server's: a Blazor circuit lives for minutes or hours, so each call takes
/// its own service scope (and with it a short-lived DbContext), and the caller is the circuit's signed-in person
/// (source "ui" in the audit).
/// </summary>
public sealed class PageCalls(IServiceScopeFactory scopes, AuthenticationStateProvider authentication)
{
    public const string SignedOut = "You are signed out; sign in again.";

    public async Task<Outcome<T>> RunAsync<TService, T>(Func<TService, Caller, Task<Outcome<T>>> call) where TService : notnull
    {
        ArgumentNullException.ThrowIfNull(call);
        if (await CallerAsync() is not { } caller) return Outcome<T>.Forbidden(SignedOut);
        await using var scope = scopes.CreateAsyncScope();
        return await call(scope.ServiceProvider.GetRequiredService<TService>(), caller);
    }

    public async Task<TResult?> RunAsync<TService, TResult>(Func<TService, Caller, Task<TResult>> call, TResult? signedOut) where TService : notnull
    {
        ArgumentNullException.ThrowIfNull(call);
        if (await CallerAsync() is not { } caller) return signedOut;
        await using var scope = scopes.CreateAsyncScope();
        return await call(scope.ServiceProvider.GetRequiredService<TService>(), caller);
    }

    /// <summary>The signed-in person without the circuit's token id: pages act through the UI.</summary>
    public async Task<Caller?> CallerAsync() =>
        Caller.From((await authentication.GetAuthenticationStateAsync()).User) is { } caller ? caller with { ApiTokenId = null } : null;
}
