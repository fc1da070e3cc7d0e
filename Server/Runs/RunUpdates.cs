using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data.Entities;
using Runfold.Shared.Studies;

namespace Runfold.Server.Runs;

/// <summary>The state changes of a run as set-based updates. Callers narrow <c>runs</c> to the expected state (and
/// version) first, so each change is a conditional update; the answer is how many runs changed.</summary>
internal static class RunUpdates
{
    /// <summary>Open → claimed by <paramref name="holder"/> with a lease.</summary>
    public static Task<int> ClaimForAsync(this IQueryable<Run> runs, Guid holder, double hours, DateTimeOffset now, CancellationToken cancellationToken) =>
        runs.ExecuteUpdateAsync(s => s
            .SetProperty(r => r.State, RunState.Claimed)
            .SetProperty(r => r.AssigneeId, holder)
            .SetProperty(r => r.ClaimedAt, now)
            .SetProperty(r => r.LeaseExpiresAt, now.AddHours(hours))
            .SetProperty(r => r.LeaseHours, hours)
            .SetProperty(r => r.Version, r => r.Version + 1)
            .SetProperty(r => r.UpdatedAt, now), cancellationToken);

    /// <summary>Back to the open pool without a holder (release, lapsed lease; a reopened failed run also loses its
    /// current result, its revisions stay).</summary>
    public static Task<int> ReturnToOpenAsync(this IQueryable<Run> runs, DateTimeOffset now, CancellationToken cancellationToken, bool dropCurrentResult = false) =>
        runs.ExecuteUpdateAsync(s =>
        {
            s.SetProperty(r => r.State, RunState.Open)
                .SetProperty(r => r.AssigneeId, (Guid?)null)
                .SetProperty(r => r.ClaimedAt, (DateTimeOffset?)null)
                .SetProperty(r => r.LeaseExpiresAt, (DateTimeOffset?)null)
                .SetProperty(r => r.LeaseHours, (double?)null)
                .SetProperty(r => r.Version, r => r.Version + 1)
                .SetProperty(r => r.UpdatedAt, now);
            if (dropCurrentResult) s.SetProperty(r => r.CurrentRevision, 0);
        }, cancellationToken);

    /// <summary>A new revision becomes current: revision <c>RevisionCount + 1</c>, the run done or failed, the lease
    /// ended (the holder stays as who ran it).</summary>
    public static Task<int> StoreRevisionAsync(this IQueryable<Run> runs, RunState state, DateTimeOffset now, CancellationToken cancellationToken) =>
        runs.ExecuteUpdateAsync(s => s
            .SetProperty(r => r.State, state)
            .SetProperty(r => r.RevisionCount, r => r.RevisionCount + 1)
            .SetProperty(r => r.CurrentRevision, r => r.RevisionCount + 1)
            .SetProperty(r => r.LeaseExpiresAt, (DateTimeOffset?)null)
            .SetProperty(r => r.Version, r => r.Version + 1)
            .SetProperty(r => r.UpdatedAt, now), cancellationToken);
}
