using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Runs;

/// <summary>Reading runs with their current results, as the API and the run board show them.</summary>
public sealed class RunQueries(RunfoldDbContext db)
{
    public async Task<Outcome<IReadOnlyList<RunDto>>> ListAsync(Caller caller, int studyId, RunState? state, CancellationToken cancellationToken)
    {
        if (await db.RoleAsync(caller, studyId, cancellationToken) is null)
            return Outcome<IReadOnlyList<RunDto>>.NotFound(StudyAccess.NotVisible(studyId));
        return Outcome<IReadOnlyList<RunDto>>.Ok(await ListAsync(studyId, state, cancellationToken));
    }

    /// <summary>Without a role check: for callers that already checked it.</summary>
    internal Task<IReadOnlyList<RunDto>> ListAsync(int studyId, RunState? state, CancellationToken cancellationToken) =>
        ListAsync(studyId, state, null, cancellationToken);

    /// <summary>The given runs of a study (no role check), in run-number order.</summary>
    internal Task<IReadOnlyList<RunDto>> ListByIdsAsync(int studyId, IReadOnlyCollection<int> runIds, CancellationToken cancellationToken) =>
        runIds.Count == 0 ? Task.FromResult<IReadOnlyList<RunDto>>([]) : ListAsync(studyId, null, runIds, cancellationToken);

    private async Task<IReadOnlyList<RunDto>> ListAsync(int studyId, RunState? state, IReadOnlyCollection<int>? runIds, CancellationToken cancellationToken)
    {
        var factors = await db.StudyFactors.AsNoTracking().Where(f => f.StudyId == studyId).ToListAsync(cancellationToken);
        var space = factors.ToFactorSpace();
        var runs = db.Runs.AsNoTracking().Where(r => r.StudyId == studyId);
        if (state is { } s) runs = runs.Where(r => r.State == s);
        if (runIds is not null) runs = runs.Where(r => runIds.Contains(r.Id));
        var rows = await runs
            .LeftJoin(db.ResultRevisions,
                r => new { RunId = r.Id, Revision = r.CurrentRevision },
                v => new { v.RunId, v.Revision },
                (r, v) => new
                {
                    r.Id, r.Number, Wave = r.Wave!.Number, r.State, r.FactorValues,
                    Assignee = r.Assignee!.UserName, r.LeaseExpiresAt,
                    Result = v == null ? null : new { v.Values, v.Revision, v.Note },
                })
            .OrderBy(r => r.Number)
            .ToListAsync(cancellationToken);
        return [.. rows.Select(r => new RunDto(
            r.Id, r.Number, r.Wave, r.State, space.ToValues(r.FactorValues), r.Assignee, r.LeaseExpiresAt,
            r.Result is null ? null : new RunResultDto(r.Result.Values, r.Result.Revision, r.Result.Note)))];
    }
}
