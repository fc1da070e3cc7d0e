using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Shared.Studies;

namespace Runfold.Server.Studies;

/// <summary>The caller's role on a study: the admin is lead everywhere; others need a membership.
/// Roles are ordered viewer &lt; analyst &lt; lead: each may do what the one below may.</summary>
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

    /// <summary>The caller's role when it is at least <paramref name="needed"/>; otherwise the failure to answer
    /// with: 404 when the study is not visible to the caller, 403 naming what the role may not do.</summary>
    public static async Task<(StudyRole Role, Outcome<T>? Failure)> RequireAsync<T>(this RunfoldDbContext db, Caller caller,
        int studyId, StudyRole needed, string action, CancellationToken cancellationToken)
    {
        var role = await db.RoleAsync(caller, studyId, cancellationToken);
        if (role is null) return (default, Outcome<T>.NotFound(NotVisible(studyId)));
        if (role < needed) return (role.Value, Outcome<T>.Forbidden(Refusal(role.Value, needed, action)));
        return (role.Value, null);
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

    public static string RunNotVisible(int runId) => $"There is no run {runId}, or you are not a member of its study.";

    /// <summary>"As a viewer you may not claim runs; that needs the analyst or lead role on this study."</summary>
    public static string Refusal(StudyRole role, StudyRole needed, string action) =>
        $"As {Article(role)} {Name(role)} you may not {action}; that needs the {(needed == StudyRole.Lead ? "lead" : "analyst or lead")} role on this study.";

    public static string Name(StudyRole role) => role.ToString().ToLowerInvariant();

    private static string Article(StudyRole role) => role == StudyRole.Analyst ? "an" : "a";
}
