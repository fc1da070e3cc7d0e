using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;

namespace Runfold.Server.Studies;

/// <summary>Audit events and the result-set version, written in the transaction of the change they describe.</summary>
public static class Audit
{
    /// <summary>An event by a person (through the UI or an API token), or by the server when
    /// <paramref name="caller"/> is null.</summary>
    public static AuditEvent Event(Caller? caller, int? studyId, int? runId, string kind, string detail, DateTimeOffset at) => new()
    {
        StudyId = studyId,
        RunId = runId,
        ActorId = caller?.UserId,
        ApiTokenId = caller?.ApiTokenId,
        Source = caller?.Source ?? "system",
        Kind = kind,
        Detail = detail.Length > 2000 ? detail[..1999] + "…" : detail,
        At = at,
    };

    /// <summary>Bumps the study's result-set version (in the caller's transaction) and returns the new value.</summary>
    public static async Task<long> BumpResultSetAsync(this RunfoldDbContext db, int studyId, DateTimeOffset now, CancellationToken cancellationToken)
    {
        await db.Studies.Where(s => s.Id == studyId).ExecuteUpdateAsync(s => s
            .SetProperty(x => x.ResultSetVersion, x => x.ResultSetVersion + 1)
            .SetProperty(x => x.LastActivityAt, now), cancellationToken);
        return await db.Studies.Where(s => s.Id == studyId).Select(s => s.ResultSetVersion).FirstAsync(cancellationToken);
    }

    public static Task<long> ResultSetVersionAsync(this RunfoldDbContext db, int studyId, CancellationToken cancellationToken) =>
        db.Studies.Where(s => s.Id == studyId).Select(s => s.ResultSetVersion).FirstOrDefaultAsync(cancellationToken);
}
