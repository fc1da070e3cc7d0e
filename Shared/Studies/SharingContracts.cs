namespace Runfold.Shared.Studies;

// Share links: a signed, expiring, revocable address that opens a study's read-only summary without an account
// (DESIGN.md §1: "managers get a read-only, always-current shortlist").

/// <summary><c>POST /api/studies/{id}/share-links</c>: how many days the link works (14 by default, at most 90)
/// and a note for the lead (whom it was sent to).</summary>
public sealed record ShareLinkRequest(double? LifetimeDays = null, string? Note = null);

/// <summary>A share link as the lead sees it. <see cref="Path"/> (<c>/shared/{token}</c>) is given while the link
/// works, so the lead can copy it again; it is null once the link is revoked or expired.</summary>
public sealed record ShareLinkDto(
    int Id,
    string? Note,
    string CreatedBy,
    DateTimeOffset CreatedAt,
    DateTimeOffset ExpiresAt,
    DateTimeOffset? RevokedAt,
    string? Path)
{
    public bool IsActive(DateTimeOffset now) => RevokedAt is null && ExpiresAt > now;
}

/// <summary>What a share link shows: the study without its members, the latest analysis snapshot (null before
/// the first one), until when the link works and its token for the report download.</summary>
public sealed record SharedSummary(StudyDetail Study, AnalysisSnapshotDto? Snapshot, DateTimeOffset ExpiresAt, string Token);

/// <summary>The lead's share links of a study, for the pages. Every call checks the signed-in person's role.</summary>
public interface IShareLinks
{
    Task<Outcome<ShareLinkDto>> CreateAsync(int studyId, ShareLinkRequest request, CancellationToken cancellationToken = default);

    Task<Outcome<IReadOnlyList<ShareLinkDto>>> ListAsync(int studyId, CancellationToken cancellationToken = default);

    Task<Outcome<ShareLinkDto>> RevokeAsync(int studyId, int linkId, CancellationToken cancellationToken = default);
}

/// <summary>Opens a share link without an account. The link's signature, expiry and revocation are checked on
/// every call, so a revoked link stops working on the next read.</summary>
public interface ISharedStudies
{
    /// <summary>The summary, or a sentence saying why the link no longer opens (unknown, expired, revoked).</summary>
    Task<Outcome<SharedSummary>> OpenAsync(string token, CancellationToken cancellationToken = default);

    /// <summary>Calls <paramref name="changed"/> when the study behind an opened link changes (runs, results, a new
    /// analysis snapshot, a link revoked) until disposed; the page then opens the link again.</summary>
    IDisposable Watch(int studyId, Func<Task> changed);
}
