using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Auth;

/// <summary>Accepting a lead's invitation: redeeming the code is a conditional update, so a link works once.</summary>
public sealed class Invitations(RunfoldDbContext db, TimeProvider time, IStudyChangeNotifier changes, AccountService accounts) : IInvitationDirectory
{
    public async Task<InvitationPreview?> PreviewAsync(string code, CancellationToken cancellationToken = default)
    {
        var found = await FindAsync(code, cancellationToken);
        if (found is null) return null;
        var name = await db.Studies.Where(s => s.Id == found.StudyId).Select(s => s.Name).FirstAsync(cancellationToken);
        return new InvitationPreview(found.StudyId, name, found.Role, found.ExpiresAt);
    }

    /// <summary>Adds the signed-in person to the invitation's study (keeping a higher role they already have).</summary>
    public async Task<Outcome<InvitationPreview>> AcceptAsync(Caller caller, string code, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var found = await FindAsync(code, cancellationToken);
        if (found is null) return Outcome<InvitationPreview>.NotFound(Unusable);
        var now = time.GetUtcNow();
        await using var transaction = await db.Database.BeginTransactionAsync(cancellationToken);
        var taken = await db.Invitations.Where(i => i.Id == found.Id && i.AcceptedAt == null && i.RevokedAt == null && i.ExpiresAt > now)
            .ExecuteUpdateAsync(s => s.SetProperty(i => i.AcceptedAt, now).SetProperty(i => i.AcceptedById, caller.UserId), cancellationToken);
        if (taken != 1) return Outcome<InvitationPreview>.NotFound(Unusable);
        var member = await db.StudyMembers.FirstOrDefaultAsync(m => m.StudyId == found.StudyId && m.UserId == caller.UserId, cancellationToken);
        var role = found.Role;
        if (member is null) db.StudyMembers.Add(new StudyMember { StudyId = found.StudyId, UserId = caller.UserId, Role = role, AddedAt = now });
        else if (member.Role < role) member.Role = role;
        else role = member.Role;
        db.AuditEvents.Add(Audit.Event(caller, found.StudyId, null, "invitation.accepted",
            $"{caller.UserName} accepted an invitation and joined as {StudyAccess.Name(role)}", now));
        await db.SaveChangesAsync(cancellationToken);
        await transaction.CommitAsync(cancellationToken);
        changes.Publish(new StudyChange(found.StudyId, StudyChangeKind.Members, await db.ResultSetVersionAsync(found.StudyId, cancellationToken)));
        var name = await db.Studies.Where(s => s.Id == found.StudyId).Select(s => s.Name).FirstAsync(cancellationToken);
        return Outcome<InvitationPreview>.Ok(new InvitationPreview(found.StudyId, name, role, found.ExpiresAt));
    }

    /// <summary>Creates an account for someone who has none, then accepts the invitation with it.</summary>
    public async Task<(RunfoldUser? User, Outcome<InvitationPreview> Outcome)> RegisterAndAcceptAsync(string code, string? userName,
        string? displayName, string? password, CancellationToken cancellationToken)
    {
        if (await FindAsync(code, cancellationToken) is null) return (null, Outcome<InvitationPreview>.NotFound(Unusable));
        var errors = new ValidationErrors();
        if (string.IsNullOrWhiteSpace(userName)) errors.Add("userName", "Choose a user name.");
        if (string.IsNullOrEmpty(password)) errors.Add("password", "Choose a password.");
        if (!errors.IsEmpty) return (null, Outcome<InvitationPreview>.Invalid(errors));
        var (user, failed) = await accounts.CreateAsync(userName!, displayName, password);
        if (user is null) return (null, Outcome<InvitationPreview>.Invalid(failed!));
        var caller = new Caller(user.Id, user.UserName!, false, null);
        var accepted = await AcceptAsync(caller, code, cancellationToken);
        if (!accepted.IsOk)
        {
            await db.Users.Where(u => u.Id == user.Id).ExecuteDeleteAsync(cancellationToken);
            return (null, accepted);
        }
        return (user, accepted);
    }

    private const string Unusable = "This invitation link has been used, revoked or has expired; ask the study's lead for a new one.";

    private Task<Invitation?> FindAsync(string code, CancellationToken cancellationToken)
    {
        if (string.IsNullOrWhiteSpace(code) || code.Length > 200) return Task.FromResult<Invitation?>(null);
        var hash = Secrets.Hash(code.Trim());
        var now = time.GetUtcNow();
        return db.Invitations.AsNoTracking()
            .FirstOrDefaultAsync(i => i.CodeHash == hash && i.AcceptedAt == null && i.RevokedAt == null && i.ExpiresAt > now, cancellationToken);
    }
}
