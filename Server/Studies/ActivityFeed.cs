using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Results;
using Runfold.Shared.Studies;

namespace Runfold.Server.Studies;

/// <summary>A study's audit events as its activity feed, newest first: who, what, when, and whether from the UI,
/// which API token, or the server itself.</summary>
public sealed class ActivityFeed(RunfoldDbContext db)
{
    public const int MaxLimit = 500;

    public async Task<Outcome<IReadOnlyList<ActivityDto>>> ListAsync(Caller caller, int studyId, long? before, int limit, CancellationToken cancellationToken)
    {
        var (_, denied) = await db.RequireAsync<IReadOnlyList<ActivityDto>>(caller, studyId, StudyRole.Viewer, "see the activity", cancellationToken);
        if (denied is not null) return denied;
        limit = Math.Clamp(limit, 1, MaxLimit);
        var events = db.AuditEvents.AsNoTracking().Where(e => e.StudyId == studyId);
        if (before is { } b) events = events.Where(e => e.Id < b);
        var rows = await events.OrderByDescending(e => e.Id).Take(limit)
            .Select(e => new
            {
                e.Id, e.At, e.Kind, e.Detail, e.Source, e.ApiTokenId,
                Actor = db.Users.Where(u => u.Id == e.ActorId).Select(u => u.UserName).FirstOrDefault(),
                Token = db.ApiTokens.Where(t => t.Id == e.ApiTokenId).Select(t => t.Name).FirstOrDefault(),
                Run = db.Runs.Where(r => r.Id == e.RunId).Select(r => (int?)r.Number).FirstOrDefault(),
            })
            .ToListAsync(cancellationToken);
        return Outcome<IReadOnlyList<ActivityDto>>.Ok([.. rows.Select(e => new ActivityDto(
            e.Id, e.At, e.Kind, e.Detail, e.Actor,
            e.Source == "system" ? "server" : ResultService.Via(e.ApiTokenId, e.Token), e.Run))]);
    }
}
