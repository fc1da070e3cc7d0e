using Microsoft.AspNetCore.Components.Authorization;
using Runfold.Server.Auth;
using Runfold.Server.Runs;
using Runfold.Shared.Studies;

namespace Runfold.Server.Studies;

/// <summary>
/// The pages' view of studies. A Blazor circuit lives for minutes or hours, so each call takes its own service
/// scope (and with it a short-lived DbContext) instead of holding one for the circuit.
/// </summary>
public sealed class StudyCatalog(IServiceScopeFactory scopes, AuthenticationStateProvider authentication) : IStudyCatalog
{
    public async Task<IReadOnlyList<StudySummary>> ListStudiesAsync(CancellationToken cancellationToken = default)
    {
        if (await CallerAsync() is not { } caller) return [];
        await using var scope = scopes.CreateAsyncScope();
        return await scope.ServiceProvider.GetRequiredService<StudyService>().ListAsync(caller, cancellationToken);
    }

    public async Task<Outcome<StudyDetail>> GetStudyAsync(int studyId, CancellationToken cancellationToken = default)
    {
        if (await CallerAsync() is not { } caller) return Outcome<StudyDetail>.Forbidden(SignedOut);
        await using var scope = scopes.CreateAsyncScope();
        return await scope.ServiceProvider.GetRequiredService<StudyService>().GetAsync(caller, studyId, cancellationToken);
    }

    public async Task<Outcome<IReadOnlyList<RunDto>>> ListRunsAsync(int studyId, RunState? state = null, CancellationToken cancellationToken = default)
    {
        if (await CallerAsync() is not { } caller) return Outcome<IReadOnlyList<RunDto>>.Forbidden(SignedOut);
        await using var scope = scopes.CreateAsyncScope();
        return await scope.ServiceProvider.GetRequiredService<RunQueries>().ListAsync(caller, studyId, state, cancellationToken);
    }

    private const string SignedOut = "You are signed out; sign in again.";

    private async Task<Caller?> CallerAsync() => Caller.From((await authentication.GetAuthenticationStateAsync()).User);
}
