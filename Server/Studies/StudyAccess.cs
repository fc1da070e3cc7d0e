using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Shared.Studies;

namespace Runfold.Server.Studies;

/// <summary>The caller's role on a study: the admin is lead everywhere; others need a membership.</summary>
public static class StudyAccess
{
    /// <summary>Null when the study does not exist or the caller is not a member.</summary>
    public static async Task<StudyRole?> RoleAsync(this RunfoldDbContext db, Caller caller, int studyId, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        if (caller.IsAdmin)
            return await db.Studies.AnyAsync(s => s.Id == studyId, cancellationToken) ? StudyRole.Lead : null;
        return await db.StudyMembers
            .Where(m => m.StudyId == studyId && m.UserId == caller.UserId)
            .Select(m => (StudyRole?)m.Role)
            .FirstOrDefaultAsync(cancellationToken);
    }

    /// <summary>The studies the caller may see.</summary>
    public static IQueryable<Data.Entities.Study> VisibleTo(this RunfoldDbContext db, Caller caller)
    {
        ArgumentNullException.ThrowIfNull(caller);
        return caller.IsAdmin
            ? db.Studies
            : db.Studies.Where(s => db.StudyMembers.Any(m => m.StudyId == s.Id && m.UserId == caller.UserId));
    }

    public static string NotVisible(int studyId) => $"There is no study {studyId}, or you are not a member of it.";
}
