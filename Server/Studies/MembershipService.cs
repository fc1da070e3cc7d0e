using System.Globalization;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Shared.Studies;

namespace Runfold.Server.Studies;

/// <summary>The lead's management of a study: name, description and lease length; members and their roles;
/// invitations by one-time link. Each change is audited.</summary>
public sealed class MembershipService(RunfoldDbContext db, TimeProvider time, IStudyChangeNotifier changes, StudyService studies)
{
    public static readonly TimeSpan InvitationLifetime = TimeSpan.FromDays(7);

    public async Task<Outcome<StudyDetail>> EditAsync(Caller caller, int studyId, StudyEdit? edit, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var (_, denied) = await db.RequireAsync<StudyDetail>(caller, studyId, StudyRole.Lead, "edit the study", cancellationToken);
        if (denied is not null) return denied;
        var errors = new ValidationErrors();
        var name = edit?.Name?.Trim();
        if (edit?.Name is not null && string.IsNullOrEmpty(name)) errors.Add("name", "The study needs a name.");
        if (name is { Length: > StudyRules.MaxNameLength }) errors.Add("name", $"The study name is longer than {StudyRules.MaxNameLength} characters.");
        if (edit?.Description is { Length: > StudyRules.MaxDescriptionLength })
            errors.Add("description", $"The description is longer than {StudyRules.MaxDescriptionLength} characters.");
        if (ResultRules.CheckLeaseHours(edit?.LeaseHours) is { } leaseError) errors.Add("leaseHours", leaseError);
        if (!errors.IsEmpty) return Outcome<StudyDetail>.Invalid(errors);

        var study = await db.Studies.FirstAsync(s => s.Id == studyId, cancellationToken);
        var said = new List<string>();
        if (name is not null && name != study.Name) { said.Add($"renamed the study to '{name}'"); study.Name = name; }
        if (edit!.Description is not null && edit.Description.Trim() != (study.Description ?? ""))
        {
            study.Description = edit.Description.Trim().Length == 0 ? null : edit.Description.Trim();
            said.Add("changed the description");
        }
        if (edit.LeaseHours is { } hours && hours != study.LeaseHours)
        {
            said.Add(string.Create(CultureInfo.InvariantCulture, $"set the lease length to {hours:0.##} h (was {study.LeaseHours:0.##} h)"));
            study.LeaseHours = hours;
        }
        if (said.Count > 0)
        {
            var now = time.GetUtcNow();
            study.LastActivityAt = now;
            db.AuditEvents.Add(Audit.Event(caller, studyId, null, "study.edited", $"{caller.UserName} {string.Join(", ", said)}", now));
            await db.SaveChangesAsync(cancellationToken);
            changes.Publish(new StudyChange(studyId, StudyChangeKind.Members, study.ResultSetVersion));
        }
        db.ChangeTracker.Clear();
        return await studies.GetAsync(caller, studyId, cancellationToken);
    }

    public async Task<Outcome<IReadOnlyList<StudyMemberDto>>> ListMembersAsync(Caller caller, int studyId, CancellationToken cancellationToken)
    {
        var (_, denied) = await db.RequireAsync<IReadOnlyList<StudyMemberDto>>(caller, studyId, StudyRole.Viewer, "see members", cancellationToken);
        if (denied is not null) return denied;
        return Outcome<IReadOnlyList<StudyMemberDto>>.Ok(await MembersAsync(studyId, cancellationToken));
    }

    /// <summary>Adds an existing account with a role, or changes the role of a member.</summary>
    public async Task<Outcome<StudyMemberDto>> SetRoleAsync(Caller caller, int studyId, string userName, StudyRole role, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var (_, denied) = await db.RequireAsync<StudyMemberDto>(caller, studyId, StudyRole.Lead, "manage members", cancellationToken);
        if (denied is not null) return denied;
        if (!Enum.IsDefined(role)) return Outcome<StudyMemberDto>.Invalid(ValidationErrors.Single("role", "The role must be lead, analyst or viewer."));
        var user = await FindUserAsync(userName, cancellationToken);
        if (user is null)
            return Outcome<StudyMemberDto>.NotFound($"There is no account '{userName}'. Ask the admin to create it, or send an invitation link.");

        var now = time.GetUtcNow();
        var member = await db.StudyMembers.FirstOrDefaultAsync(m => m.StudyId == studyId && m.UserId == user.Id, cancellationToken);
        string said;
        if (member is null)
        {
            db.StudyMembers.Add(new StudyMember { StudyId = studyId, UserId = user.Id, Role = role, AddedAt = now });
            said = $"{caller.UserName} added {user.UserName} as {StudyAccess.Name(role)}";
        }
        else
        {
            if (member.Role == role) return Outcome<StudyMemberDto>.Ok(Dto(user, role));
            if (member.Role == StudyRole.Lead && await IsLastLeadAsync(studyId, user.Id, cancellationToken))
                return Outcome<StudyMemberDto>.Conflict($"{user.UserName} is the study's only lead; make someone else lead first.");
            said = $"{caller.UserName} changed {user.UserName}'s role from {StudyAccess.Name(member.Role)} to {StudyAccess.Name(role)}";
            member.Role = role;
        }
        db.AuditEvents.Add(Audit.Event(caller, studyId, null, "member.role", said, now));
        await db.SaveChangesAsync(cancellationToken);
        changes.Publish(new StudyChange(studyId, StudyChangeKind.Members, await db.ResultSetVersionAsync(studyId, cancellationToken)));
        return Outcome<StudyMemberDto>.Ok(Dto(user, role));
    }

    public async Task<Outcome<StudyMemberDto>> RemoveAsync(Caller caller, int studyId, string userName, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var (_, denied) = await db.RequireAsync<StudyMemberDto>(caller, studyId, StudyRole.Lead, "manage members", cancellationToken);
        if (denied is not null) return denied;
        var user = await FindUserAsync(userName, cancellationToken);
        var member = user is null ? null : await db.StudyMembers.FirstOrDefaultAsync(m => m.StudyId == studyId && m.UserId == user.Id, cancellationToken);
        if (member is null) return Outcome<StudyMemberDto>.NotFound($"'{userName}' is not a member of this study.");
        if (member.Role == StudyRole.Lead && await IsLastLeadAsync(studyId, user!.Id, cancellationToken))
            return Outcome<StudyMemberDto>.Conflict($"{user.UserName} is the study's only lead; make someone else lead first.");
        db.StudyMembers.Remove(member);
        db.AuditEvents.Add(Audit.Event(caller, studyId, null, "member.removed", $"{caller.UserName} removed {user!.UserName} ({StudyAccess.Name(member.Role)}) from the study", time.GetUtcNow()));
        await db.SaveChangesAsync(cancellationToken);
        changes.Publish(new StudyChange(studyId, StudyChangeKind.Members, await db.ResultSetVersionAsync(studyId, cancellationToken)));
        return Outcome<StudyMemberDto>.Ok(Dto(user, member.Role));
    }

    /// <summary>A one-time link that adds whoever accepts it with the given role. The code is returned once; only
    /// its hash is stored.</summary>
    public async Task<Outcome<InvitationCreated>> InviteAsync(Caller caller, int studyId, InvitationRequest? request, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var (_, denied) = await db.RequireAsync<InvitationCreated>(caller, studyId, StudyRole.Lead, "invite people", cancellationToken);
        if (denied is not null) return denied;
        if (request is null || !Enum.IsDefined(request.Role))
            return Outcome<InvitationCreated>.Invalid(ValidationErrors.Single("role", "The invitation needs a role: lead, analyst or viewer."));
        if (request.Note is { Length: > 200 })
            return Outcome<InvitationCreated>.Invalid(ValidationErrors.Single("note", "The note is longer than 200 characters."));
        var code = Secrets.NewCode();
        var now = time.GetUtcNow();
        var invitation = new Invitation
        {
            StudyId = studyId, Role = request.Role, CodeHash = Secrets.Hash(code), Note = string.IsNullOrWhiteSpace(request.Note) ? null : request.Note.Trim(),
            CreatedById = caller.UserId, CreatedAt = now, ExpiresAt = now + InvitationLifetime,
        };
        db.Invitations.Add(invitation);
        db.AuditEvents.Add(Audit.Event(caller, studyId, null, "invitation.created",
            $"{caller.UserName} created an invitation as {StudyAccess.Name(request.Role)}{(invitation.Note is null ? "" : $" for {invitation.Note}")}", now));
        await db.SaveChangesAsync(cancellationToken);
        return Outcome<InvitationCreated>.Ok(new InvitationCreated(invitation.Id, code, InvitationPath(code), invitation.Role, invitation.ExpiresAt));
    }

    public async Task<Outcome<IReadOnlyList<InvitationDto>>> ListInvitationsAsync(Caller caller, int studyId, CancellationToken cancellationToken)
    {
        var (_, denied) = await db.RequireAsync<IReadOnlyList<InvitationDto>>(caller, studyId, StudyRole.Lead, "see invitations", cancellationToken);
        if (denied is not null) return denied;
        var now = time.GetUtcNow();
        var pending = await db.Invitations.AsNoTracking()
            .Where(i => i.StudyId == studyId && i.AcceptedAt == null && i.RevokedAt == null && i.ExpiresAt > now)
            .OrderByDescending(i => i.CreatedAt)
            .Select(i => new InvitationDto(i.Id, i.Role, i.Note, db.Users.Where(u => u.Id == i.CreatedById).Select(u => u.UserName).FirstOrDefault() ?? "", i.CreatedAt, i.ExpiresAt))
            .ToListAsync(cancellationToken);
        return Outcome<IReadOnlyList<InvitationDto>>.Ok(pending);
    }

    public async Task<Outcome<InvitationDto>> RevokeInvitationAsync(Caller caller, int studyId, int invitationId, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var (_, denied) = await db.RequireAsync<InvitationDto>(caller, studyId, StudyRole.Lead, "revoke invitations", cancellationToken);
        if (denied is not null) return denied;
        var now = time.GetUtcNow();
        var revoked = await db.Invitations.Where(i => i.Id == invitationId && i.StudyId == studyId && i.AcceptedAt == null && i.RevokedAt == null)
            .ExecuteUpdateAsync(s => s.SetProperty(i => i.RevokedAt, now), cancellationToken);
        if (revoked != 1) return Outcome<InvitationDto>.NotFound($"This study has no pending invitation {invitationId}.");
        var invitation = await db.Invitations.AsNoTracking().FirstAsync(i => i.Id == invitationId, cancellationToken);
        db.AuditEvents.Add(Audit.Event(caller, studyId, null, "invitation.revoked", $"{caller.UserName} revoked an invitation as {StudyAccess.Name(invitation.Role)}", now));
        await db.SaveChangesAsync(cancellationToken);
        return Outcome<InvitationDto>.Ok(new InvitationDto(invitation.Id, invitation.Role, invitation.Note, caller.UserName, invitation.CreatedAt, invitation.ExpiresAt));
    }

    public static string InvitationPath(string code) => "/invitations/" + code;

    private Task<RunfoldUser?> FindUserAsync(string userName, CancellationToken cancellationToken)
    {
        var normalized = (userName ?? "").Trim().ToUpperInvariant();
        return db.Users.AsNoTracking().FirstOrDefaultAsync(u => u.NormalizedUserName == normalized, cancellationToken);
    }

    private async Task<bool> IsLastLeadAsync(int studyId, Guid userId, CancellationToken cancellationToken) =>
        !await db.StudyMembers.AnyAsync(m => m.StudyId == studyId && m.Role == StudyRole.Lead && m.UserId != userId, cancellationToken);

    private async Task<IReadOnlyList<StudyMemberDto>> MembersAsync(int studyId, CancellationToken cancellationToken) =>
        await db.StudyMembers.AsNoTracking().Where(m => m.StudyId == studyId)
            .OrderByDescending(m => m.Role).ThenBy(m => m.User!.UserName)
            .Select(m => new StudyMemberDto(m.UserId, m.User!.UserName ?? "", m.User.DisplayName, m.Role))
            .ToListAsync(cancellationToken);

    private static StudyMemberDto Dto(RunfoldUser user, StudyRole role) => new(user.Id, user.UserName ?? "", user.DisplayName, role);
}
