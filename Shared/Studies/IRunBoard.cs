namespace Runfold.Shared.Studies;

/// <summary>What the run pages do for the signed-in person: claim, heartbeat, release and assign runs, post
/// results (one run or a file), read a run's history and reopen a failed run. Every call checks the person's
/// role on the study; the answers are the same as the HTTP API's.</summary>
public interface IRunBoard
{
    Task<Outcome<IReadOnlyList<RunDto>>> ClaimAsync(int studyId, ClaimRequest request, CancellationToken cancellationToken = default);

    Task<Outcome<HeartbeatAnswer>> HeartbeatAsync(int runId, CancellationToken cancellationToken = default);

    /// <summary>Returns the run, now open.</summary>
    Task<Outcome<RunDto>> ReleaseAsync(int runId, CancellationToken cancellationToken = default);

    Task<Outcome<IReadOnlyList<RunDto>>> AssignAsync(int studyId, AssignRequest request, CancellationToken cancellationToken = default);

    /// <summary>Posts one result. The page passes a fresh <paramref name="idempotencyKey"/> per submitted form, so
    /// a double click stores one revision.</summary>
    Task<Outcome<ResultReceipt>> SubmitResultAsync(int runId, RunState state, IReadOnlyDictionary<string, ResultValue> values,
        string? note, string idempotencyKey, CancellationToken cancellationToken = default);

    Task<Outcome<RunHistory>> GetRunAsync(int runId, CancellationToken cancellationToken = default);

    Task<Outcome<RunDto>> ReopenAsync(int runId, CancellationToken cancellationToken = default);

    Task<BulkUploadResult> UploadResultsAsync(int studyId, string fileName, Stream content, CancellationToken cancellationToken = default);

    /// <summary>The largest bulk file the server takes, in bytes.</summary>
    long MaxUploadBytes { get; }
}

/// <summary>A study's activity feed, newest first.</summary>
public interface IActivityFeed
{
    /// <summary>Up to <paramref name="limit"/> events older than <paramref name="before"/> (an event id), newest first.</summary>
    Task<Outcome<IReadOnlyList<ActivityDto>>> ListAsync(int studyId, long? before = null, int limit = 100, CancellationToken cancellationToken = default);
}

/// <summary>The lead's management of a study: members and roles, invitations, name, description and lease length.</summary>
public interface IStudyMembership
{
    Task<Outcome<StudyDetail>> EditAsync(int studyId, StudyEdit edit, CancellationToken cancellationToken = default);

    /// <summary>Adds an existing account to the study or changes its role.</summary>
    Task<Outcome<StudyMemberDto>> SetRoleAsync(int studyId, string userName, StudyRole role, CancellationToken cancellationToken = default);

    Task<Outcome<StudyMemberDto>> RemoveAsync(int studyId, string userName, CancellationToken cancellationToken = default);

    Task<Outcome<InvitationCreated>> InviteAsync(int studyId, InvitationRequest request, CancellationToken cancellationToken = default);

    Task<Outcome<IReadOnlyList<InvitationDto>>> ListInvitationsAsync(int studyId, CancellationToken cancellationToken = default);

    Task<Outcome<InvitationDto>> RevokeInvitationAsync(int studyId, int invitationId, CancellationToken cancellationToken = default);
}

/// <summary>The signed-in person's own account: password and personal API tokens.</summary>
public interface IAccountService
{
    Task<Outcome<AccountDto>> GetAsync(CancellationToken cancellationToken = default);

    Task<Outcome<ApiTokenCreated>> CreateTokenAsync(string name, CancellationToken cancellationToken = default);

    Task<Outcome<ApiTokenDto>> RevokeTokenAsync(int tokenId, CancellationToken cancellationToken = default);

    Task<Outcome<AccountDto>> ChangePasswordAsync(PasswordChange change, CancellationToken cancellationToken = default);
}

/// <summary>Tells an open page that its study changed (a claim, a result, a lapsed lease …), so it can re-read.</summary>
public interface IStudyUpdates
{
    /// <summary>Calls <paramref name="changed"/> after each committed change of the study until disposed.</summary>
    IDisposable Watch(int studyId, Func<Task> changed);
}

/// <summary>What an invitation link offers, for its page before the person accepts.</summary>
public interface IInvitationDirectory
{
    /// <summary>Null when the code is unknown, used, revoked or expired.</summary>
    Task<InvitationPreview?> PreviewAsync(string code, CancellationToken cancellationToken = default);
}
