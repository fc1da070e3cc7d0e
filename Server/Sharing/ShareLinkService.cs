using System.Globalization;
using Microsoft.EntityFrameworkCore;
using Runfold.Client.Components;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Reports;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Sharing;

/// <summary>The lead's share links (create, list, revoke; each audited) and opening a link without an account.
/// A link works while its signed token names a stored row that is neither expired nor revoked — checked on
/// every request, so revoking takes effect at once.</summary>
public sealed class ShareLinkService(RunfoldDbContext db, TimeProvider time, ShareLinkTokens tokens, IStudyChangeNotifier changes,
    StudyService studies, StoredSnapshots snapshots)
{
    public const double DefaultLifetimeDays = 14;
    public const double MaxLifetimeDays = 90;
    public const int MaxNoteLength = 200;

    /// <summary>The shortest lifetime: one hour.</summary>
    public const double MinLifetimeDays = 1.0 / 24;

    public async Task<Outcome<ShareLinkDto>> CreateAsync(Caller caller, int studyId, ShareLinkRequest? request, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var (_, denied) = await db.RequireAsync<ShareLinkDto>(caller, studyId, StudyRole.Lead, "create share links", cancellationToken);
        if (denied is not null) return denied;
        var days = request?.LifetimeDays ?? DefaultLifetimeDays;
        var errors = new ValidationErrors();
        if (!double.IsFinite(days) || days < MinLifetimeDays || days > MaxLifetimeDays)
            errors.Add("lifetimeDays", string.Create(CultureInfo.InvariantCulture,
                $"A share link works for one hour (0.042 days) up to {MaxLifetimeDays:0} days; {days:0.###} days is outside that."));
        var note = string.IsNullOrWhiteSpace(request?.Note) ? null : request.Note.Trim();
        if (note is { Length: > MaxNoteLength }) errors.Add("note", $"The note is longer than {MaxNoteLength} characters.");
        if (!errors.IsEmpty) return Outcome<ShareLinkDto>.Invalid(errors);

        var now = time.GetUtcNow();
        var link = new ShareLink { StudyId = studyId, Note = note, CreatedById = caller.UserId, CreatedAt = now, ExpiresAt = now + TimeSpan.FromDays(days) };
        db.ShareLinks.Add(link);
        db.AuditEvents.Add(Audit.Event(caller, studyId, null, "share.created",
            $"{caller.UserName} created a share link{(note is null ? "" : $" for {note}")}, working until {Instant(link.ExpiresAt)}", now));
        await db.SaveChangesAsync(cancellationToken);
        return Outcome<ShareLinkDto>.Ok(Dto(link, caller.UserName, now));
    }

    /// <summary>Every link of the study, newest first; working links carry their path to copy again.</summary>
    public async Task<Outcome<IReadOnlyList<ShareLinkDto>>> ListAsync(Caller caller, int studyId, CancellationToken cancellationToken)
    {
        var (_, denied) = await db.RequireAsync<IReadOnlyList<ShareLinkDto>>(caller, studyId, StudyRole.Lead, "see share links", cancellationToken);
        if (denied is not null) return denied;
        var now = time.GetUtcNow();
        var links = await db.ShareLinks.AsNoTracking()
            .Where(l => l.StudyId == studyId)
            .OrderByDescending(l => l.CreatedAt).ThenByDescending(l => l.Id)
            .Select(l => new { Link = l, CreatedBy = db.Users.Where(u => u.Id == l.CreatedById).Select(u => u.UserName).FirstOrDefault() })
            .ToListAsync(cancellationToken);
        return Outcome<IReadOnlyList<ShareLinkDto>>.Ok([.. links.Select(l => Dto(l.Link, l.CreatedBy ?? "", now))]);
    }

    public async Task<Outcome<ShareLinkDto>> RevokeAsync(Caller caller, int studyId, int linkId, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var (_, denied) = await db.RequireAsync<ShareLinkDto>(caller, studyId, StudyRole.Lead, "revoke share links", cancellationToken);
        if (denied is not null) return denied;
        var now = time.GetUtcNow();
        var revoked = await db.ShareLinks.Where(l => l.Id == linkId && l.StudyId == studyId && l.RevokedAt == null)
            .ExecuteUpdateAsync(s => s.SetProperty(l => l.RevokedAt, now).SetProperty(l => l.RevokedById, caller.UserId), cancellationToken);
        if (revoked != 1) return Outcome<ShareLinkDto>.NotFound($"This study has no share link {linkId} that is not revoked already.");
        var link = await db.ShareLinks.AsNoTracking().FirstAsync(l => l.Id == linkId, cancellationToken);
        db.AuditEvents.Add(Audit.Event(caller, studyId, null, "share.revoked",
            $"{caller.UserName} revoked a share link{(link.Note is null ? "" : $" for {link.Note}")} created {Instant(link.CreatedAt)}", now));
        await db.SaveChangesAsync(cancellationToken);
        // Pages open on the link re-check it when told the study changed.
        changes.Publish(new StudyChange(studyId, StudyChangeKind.Members, await db.ResultSetVersionAsync(studyId, cancellationToken)));
        var createdBy = await db.Users.Where(u => u.Id == link.CreatedById).Select(u => u.UserName).FirstOrDefaultAsync(cancellationToken);
        return Outcome<ShareLinkDto>.Ok(Dto(link, createdBy ?? "", now));
    }

    /// <summary>The link a token names when it still works for <paramref name="studyId"/> (any study when null),
    /// or the sentence to show instead.</summary>
    public async Task<Outcome<ShareLink>> CheckAsync(string? token, int? studyId, CancellationToken cancellationToken)
    {
        var ids = tokens.Read(token);
        var link = ids is { } named
            ? await db.ShareLinks.AsNoTracking().FirstOrDefaultAsync(l => l.Id == named.LinkId && l.StudyId == named.StudyId, cancellationToken)
            : null;
        if (link is null || (studyId is { } id && link.StudyId != id))
            return Outcome<ShareLink>.NotFound("This share link is not valid. Check that it was copied whole, or ask the study's lead for a new one.");
        if (link.RevokedAt is { } revokedAt)
            return Outcome<ShareLink>.Forbidden($"This share link was revoked on {Instant(revokedAt)}. Ask the study's lead for a new one.");
        if (link.ExpiresAt <= time.GetUtcNow())
            return Outcome<ShareLink>.Forbidden($"This share link expired on {Instant(link.ExpiresAt)}. Ask the study's lead for a new one.");
        return Outcome<ShareLink>.Ok(link);
    }

    /// <summary>What the link shows: the study without its members and the latest analysis snapshot.</summary>
    public async Task<Outcome<SharedSummary>> OpenAsync(string? token, CancellationToken cancellationToken)
    {
        var checkedLink = await CheckAsync(token, null, cancellationToken);
        if (!checkedLink.IsOk) return checkedLink.As<SharedSummary>();
        var link = checkedLink.Value!;
        var study = await studies.LoadDetailAsync(link.StudyId, cancellationToken) with { Members = [], YourRole = StudyRole.Viewer };
        return Outcome<SharedSummary>.Ok(new SharedSummary(study, await snapshots.LatestAsync(link.StudyId, cancellationToken), link.ExpiresAt, token!.Trim()));
    }

    private ShareLinkDto Dto(ShareLink link, string createdBy, DateTimeOffset now) => new(
        link.Id, link.Note, createdBy, link.CreatedAt, link.ExpiresAt, link.RevokedAt,
        link.RevokedAt is null && link.ExpiresAt > now ? ShareLinkTokens.PathOf(tokens.Issue(link.Id, link.StudyId)) : null);

    private static string Instant(DateTimeOffset at) => Formats.Instant(at);
}
