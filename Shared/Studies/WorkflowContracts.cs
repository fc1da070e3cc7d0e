using System.Text.Json;

namespace Runfold.Shared.Studies;

// Request and answer shapes of the run workflow (DESIGN.md §5): claims and leases, results and revisions, bulk
// files, members and invitations, API tokens, and the activity feed.

/// <summary><c>POST /api/studies/{id}/claims</c>: take up to <see cref="Count"/> of the lowest-numbered open runs.
/// Without <see cref="LeaseHours"/> the study's lease length applies.</summary>
public sealed record ClaimRequest(int Count = 1, double? LeaseHours = null);

/// <summary><c>POST /api/studies/{id}/assignments</c>: the lead hands open runs to a member by user name.</summary>
public sealed record AssignRequest(IReadOnlyList<int> Runs, string Assignee, double? LeaseHours = null);

public sealed record HeartbeatAnswer(DateTimeOffset LeaseExpiresAt);

/// <summary><c>PUT /api/runs/{id}/result</c>. Values are JSON so that a value that is not a number can be named
/// in the answer (422) rather than failing the whole body.</summary>
public sealed record ResultRequest(
    RunState State,
    IReadOnlyDictionary<string, JsonElement>? Values = null,
    string? Note = null,
    double? SolverSeconds = null);

/// <summary>The answer to a result upload. <see cref="Replayed"/> is true when an Idempotency-Key retry was
/// answered with the revision stored the first time.</summary>
public sealed record ResultReceipt(int RunId, int Number, int Revision, RunState State, bool Replayed = false);

/// <summary>One stored revision of a run's result; the newest is current.</summary>
public sealed record RevisionDto(
    int Revision,
    RunState State,
    IReadOnlyDictionary<string, double> Values,
    string? Note,
    double? SolverSeconds,
    string Author,
    string Via,
    DateTimeOffset CreatedAt,
    bool Current);

/// <summary>A run with its result history, for the run's own view.</summary>
public sealed record RunHistory(RunDto Run, IReadOnlyList<RevisionDto> Revisions);

/// <summary>The answer to a bulk results file that was stored.</summary>
public sealed record BulkUploadReport(int Accepted, int Unchanged, int Skipped, IReadOnlyList<string> Warnings);

/// <summary>One problem in a bulk results file. <see cref="Row"/> is the spreadsheet row (the header is row 1);
/// <see cref="Column"/> is the header of the cell, or null for the whole row or file.</summary>
public sealed record BulkRowError(int Row, string? Column, string Message);

/// <summary>A bulk upload either stores every row (<see cref="Report"/>) or nothing (<see cref="Outcome"/> failed,
/// with the row/column problems in <see cref="Rows"/>).</summary>
public sealed record BulkUploadResult(Outcome<BulkUploadReport> Outcome, IReadOnlyList<BulkRowError> Rows);

public enum ExportFormat { Csv, Xlsx }

/// <summary>An exported file: name, media type and content.</summary>
public sealed record ExportFile(string FileName, string ContentType, byte[] Content);

/// <summary>One line of a study's activity feed: who did what, when, and through what (the UI, which API token,
/// or the server itself).</summary>
public sealed record ActivityDto(long Id, DateTimeOffset At, string Kind, string Detail, string? Actor, string Via, int? Run);

/// <summary><c>PATCH /api/studies/{id}</c>: what the lead may change after creation.</summary>
public sealed record StudyEdit(string? Name = null, string? Description = null, double? LeaseHours = null);

/// <summary><c>PUT /api/studies/{id}/members/{userName}</c>.</summary>
public sealed record MemberRoleRequest(StudyRole Role);

/// <summary><c>POST /api/studies/{id}/invitations</c>.</summary>
public sealed record InvitationRequest(StudyRole Role, string? Note = null);

/// <summary>A new invitation. <see cref="Code"/> is shown once; the link is <c>/invitations/{code}</c>.</summary>
public sealed record InvitationCreated(int Id, string Code, string Path, StudyRole Role, DateTimeOffset ExpiresAt);

/// <summary>A pending invitation as the lead sees it (the code itself is never shown again).</summary>
public sealed record InvitationDto(int Id, StudyRole Role, string? Note, string CreatedBy, DateTimeOffset CreatedAt, DateTimeOffset ExpiresAt);

/// <summary>What an invitation offers, as its link's page shows it before accepting.</summary>
public sealed record InvitationPreview(int StudyId, string StudyName, StudyRole Role, DateTimeOffset ExpiresAt);

/// <summary><c>POST /api/users</c> (admin): a new account. Without a password the answer carries a one-time
/// sign-in link for the person.</summary>
public sealed record CreateUserRequest(string UserName, string? DisplayName = null, string? Password = null, bool IsAdmin = false);

public sealed record UserDto(Guid Id, string UserName, string? DisplayName, bool IsAdmin, bool HasPassword, bool LockedOut);

public sealed record UserCreated(UserDto User, string? SignInPath);

/// <summary><c>POST /api/account/tokens</c>.</summary>
public sealed record TokenRequest(string Name);

/// <summary>A personal API token as lists show it: never the token itself, only its first characters.</summary>
public sealed record ApiTokenDto(int Id, string Name, string Prefix, DateTimeOffset CreatedAt, DateTimeOffset? LastUsedAt, DateTimeOffset? RevokedAt);

/// <summary>A token just created: <see cref="Token"/> is shown this once and stored only as a hash.</summary>
public sealed record ApiTokenCreated(ApiTokenDto Info, string Token);

public sealed record AccountDto(Guid Id, string UserName, string? DisplayName, bool IsAdmin, bool HasPassword, IReadOnlyList<ApiTokenDto> Tokens);

public sealed record PasswordChange(string? CurrentPassword, string NewPassword);

/// <summary>How a person may sign in here: always with an API token, with a password when local accounts are
/// on, and with the company's single sign-on when it is configured (its button label).</summary>
public sealed record SignInChoices(bool Password, string? SingleSignOn);
