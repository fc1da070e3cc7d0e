using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Hosting;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Runs;

/// <summary>Reads what the run board's progress panels need — who holds and ran which runs, the waves, the result
/// and reopen times, the claim-to-result durations — and hands the arithmetic to <see cref="RunProgressMath"/>.</summary>
public sealed class RunProgressQueries(RunfoldDbContext db, TimeProvider time)
{
    /// <summary>People who posted a result this recently count as working even when they hold no claim right now.</summary>
    public static readonly TimeSpan RecentWork = TimeSpan.FromDays(7);

    public async Task<Outcome<RunProgressDto>> GetAsync(Caller caller, int studyId, CancellationToken cancellationToken)
    {
        var (_, denied) = await db.RequireAsync<RunProgressDto>(caller, studyId, StudyRole.Viewer, "see the progress", cancellationToken);
        if (denied is not null) return denied;
        var now = time.GetUtcNow();

        var runs = await db.Runs.AsNoTracking().Where(r => r.StudyId == studyId)
            .Select(r => new { r.Id, r.State, r.AssigneeId, r.ClaimedAt })
            .ToListAsync(cancellationToken);
        var revisions = await db.ResultRevisions.AsNoTracking()
            .Where(v => db.Runs.Any(r => r.Id == v.RunId && r.StudyId == studyId))
            .Select(v => new { v.RunId, v.CreatedAt, v.AuthorId })
            .ToListAsync(cancellationToken);
        var reopened = await db.AuditEvents.AsNoTracking()
            .Where(e => e.StudyId == studyId && e.Kind == "run.reopened" && e.RunId != null)
            .Select(e => new { RunId = e.RunId!.Value, e.At })
            .ToListAsync(cancellationToken);
        var waves = await db.Waves.AsNoTracking().Where(w => w.StudyId == studyId)
            .Select(w => new { w.CreatedAt, Runs = db.Runs.Count(r => r.WaveId == w.Id) })
            .ToListAsync(cancellationToken);

        // Who ran a finished run: its holder (kept after the result), else the author of its newest revision.
        var lastAuthor = revisions.GroupBy(v => v.RunId).ToDictionary(g => g.Key, g => g.MaxBy(v => v.CreatedAt)!.AuthorId);
        var people = runs
            .Select(r => (r.State, Person: r.AssigneeId ?? (r.State is RunState.Done or RunState.Failed ? lastAuthor.GetValueOrDefault(r.Id) : (Guid?)null)))
            .Where(r => r.Person is not null && r.State != RunState.Open)
            .GroupBy(r => r.Person!.Value)
            .ToList();
        var personIds = people.Select(g => g.Key).ToList();
        var names = await db.Users.AsNoTracking().Where(u => personIds.Contains(u.Id))
            .Select(u => new { u.Id, u.UserName, u.DisplayName })
            .ToDictionaryAsync(u => u.Id, cancellationToken);
        var analysts = people
            .Select(g => new AnalystProgressDto(
                names.TryGetValue(g.Key, out var n) ? n.UserName ?? "?" : "?",
                names.TryGetValue(g.Key, out var d) ? d.DisplayName : null,
                g.Count(r => r.State == RunState.Done), g.Count(r => r.State == RunState.Claimed), g.Count(r => r.State == RunState.Failed)))
            .OrderByDescending(a => a.Done).ThenByDescending(a => a.Claimed).ThenBy(a => a.UserName, StringComparer.Ordinal)
            .ToList();

        var burndown = RunProgressMath.Burndown(
            waves.Select(w => (w.CreatedAt, w.Runs)),
            revisions.Select(v => new RunFinishEvent(v.RunId, v.CreatedAt, true)).Concat(reopened.Select(e => new RunFinishEvent(e.RunId, e.At, false))),
            now);

        // Claim to result: from the run's current claim to the first result stored after it.
        var firstResultAfterClaim = revisions.ToLookup(v => v.RunId, v => v.CreatedAt);
        var durations = runs
            .Where(r => r.State is RunState.Done or RunState.Failed && r.ClaimedAt is not null)
            .Select(r => firstResultAfterClaim[r.Id].Where(at => at >= r.ClaimedAt!.Value).DefaultIfEmpty(DateTimeOffset.MinValue).Min() - r.ClaimedAt!.Value)
            .Where(d => d >= TimeSpan.Zero)
            .ToList();
        var working = runs.Where(r => r.State == RunState.Claimed && r.AssigneeId is not null).Select(r => r.AssigneeId!.Value)
            .Concat(revisions.Where(v => v.CreatedAt >= now - RecentWork).Select(v => v.AuthorId))
            .Distinct()
            .Count();
        var remaining = runs.Count(r => r.State is RunState.Open or RunState.Claimed);
        return Outcome<RunProgressDto>.Ok(new RunProgressDto(analysts, burndown, RunProgressMath.Estimate(remaining, working, durations, now), now));
    }
}

/// <summary>The run board's progress panels.</summary>
public sealed class RunProgressPages(PageCalls calls) : IRunProgress
{
    public Task<Outcome<RunProgressDto>> GetAsync(int studyId, CancellationToken cancellationToken = default) =>
        calls.RunAsync<RunProgressQueries, RunProgressDto>((s, caller) => s.GetAsync(caller, studyId, cancellationToken));
}
