using System.Collections.Concurrent;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Runs;

/// <summary>The factor space of each study, read once: a study's factors do not change after it is created, and
/// the claim answer needs them on every call.</summary>
public sealed class FactorSpaces
{
    private readonly ConcurrentDictionary<int, FactorSpace> _spaces = new();

    public async ValueTask<FactorSpace> GetAsync(RunfoldDbContext db, int studyId, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(db);
        if (_spaces.TryGetValue(studyId, out var space)) return space;
        var factors = await db.StudyFactors.AsNoTracking().Where(f => f.StudyId == studyId).ToListAsync(cancellationToken);
        space = factors.ToFactorSpace();
        return _spaces.GetOrAdd(studyId, space);
    }
}
