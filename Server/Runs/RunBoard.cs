using Runfold.Server.Hosting;
using Runfold.Server.Results;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Runs;

/// <summary>The run pages' operations, through the same services as the HTTP API.</summary>
public sealed class RunBoard(PageCalls calls, RunfoldSettings settings) : IRunBoard
{
    public long MaxUploadBytes => settings.MaxUploadBytes;

    public Task<Outcome<IReadOnlyList<RunDto>>> ClaimAsync(int studyId, ClaimRequest request, CancellationToken cancellationToken = default) =>
        calls.RunAsync<RunClaims, IReadOnlyList<RunDto>>((s, caller) => s.ClaimAsync(caller, studyId, request, cancellationToken));

    public Task<Outcome<HeartbeatAnswer>> HeartbeatAsync(int runId, CancellationToken cancellationToken = default) =>
        calls.RunAsync<RunClaims, HeartbeatAnswer>((s, caller) => s.HeartbeatAsync(caller, runId, cancellationToken));

    public Task<Outcome<RunDto>> ReleaseAsync(int runId, CancellationToken cancellationToken = default) =>
        calls.RunAsync<RunClaims, RunDto>((s, caller) => s.ReleaseAsync(caller, runId, cancellationToken));

    public Task<Outcome<IReadOnlyList<RunDto>>> AssignAsync(int studyId, AssignRequest request, CancellationToken cancellationToken = default) =>
        calls.RunAsync<RunClaims, IReadOnlyList<RunDto>>((s, caller) => s.AssignAsync(caller, studyId, request, cancellationToken));

    public Task<Outcome<ResultReceipt>> SubmitResultAsync(int runId, RunState state, IReadOnlyDictionary<string, ResultValue> values,
        string? note, string idempotencyKey, CancellationToken cancellationToken = default) =>
        calls.RunAsync<ResultService, ResultReceipt>((s, caller) => s.PutAsync(caller, runId, state, values, note, null, idempotencyKey, cancellationToken));

    public Task<Outcome<RunHistory>> GetRunAsync(int runId, CancellationToken cancellationToken = default) =>
        calls.RunAsync<ResultService, RunHistory>((s, caller) => s.HistoryAsync(caller, runId, cancellationToken));

    public Task<Outcome<RunDto>> ReopenAsync(int runId, CancellationToken cancellationToken = default) =>
        calls.RunAsync<ResultService, RunDto>((s, caller) => s.ReopenAsync(caller, runId, cancellationToken));

    public async Task<BulkUploadResult> UploadResultsAsync(int studyId, string fileName, Stream content, CancellationToken cancellationToken = default)
    {
        ArgumentNullException.ThrowIfNull(content);
        using var buffer = new MemoryStream();
        var chunk = new byte[81920];
        int read;
        while ((read = await content.ReadAsync(chunk, cancellationToken)) > 0)
        {
            buffer.Write(chunk, 0, read);
            if (buffer.Length > MaxUploadBytes)
                return new BulkUploadResult(Outcome<BulkUploadReport>.Invalid(ValidationErrors.Single("file", ResultsApi.TooLargeMessage(null, MaxUploadBytes))), []);
        }
        var bytes = buffer.ToArray();
        return await calls.RunAsync<BulkResults, BulkUploadResult>((s, caller) => s.UploadAsync(caller, studyId, fileName, bytes, cancellationToken),
                   new BulkUploadResult(Outcome<BulkUploadReport>.Forbidden(PageCalls.SignedOut), []))
               ?? new BulkUploadResult(Outcome<BulkUploadReport>.Forbidden(PageCalls.SignedOut), []);
    }
}

/// <summary>The activity pages' feed.</summary>
public sealed class ActivityPages(PageCalls calls) : IActivityFeed
{
    public Task<Outcome<IReadOnlyList<ActivityDto>>> ListAsync(int studyId, long? before = null, int limit = 100, CancellationToken cancellationToken = default) =>
        calls.RunAsync<ActivityFeed, IReadOnlyList<ActivityDto>>((s, caller) => s.ListAsync(caller, studyId, before, limit, cancellationToken));
}

/// <summary>The members page's operations.</summary>
public sealed class MembershipPages(PageCalls calls) : IStudyMembership
{
    public Task<Outcome<StudyDetail>> EditAsync(int studyId, StudyEdit edit, CancellationToken cancellationToken = default) =>
        calls.RunAsync<MembershipService, StudyDetail>((s, caller) => s.EditAsync(caller, studyId, edit, cancellationToken));

    public Task<Outcome<StudyMemberDto>> SetRoleAsync(int studyId, string userName, StudyRole role, CancellationToken cancellationToken = default) =>
        calls.RunAsync<MembershipService, StudyMemberDto>((s, caller) => s.SetRoleAsync(caller, studyId, userName, role, cancellationToken));

    public Task<Outcome<StudyMemberDto>> RemoveAsync(int studyId, string userName, CancellationToken cancellationToken = default) =>
        calls.RunAsync<MembershipService, StudyMemberDto>((s, caller) => s.RemoveAsync(caller, studyId, userName, cancellationToken));

    public Task<Outcome<InvitationCreated>> InviteAsync(int studyId, InvitationRequest request, CancellationToken cancellationToken = default) =>
        calls.RunAsync<MembershipService, InvitationCreated>((s, caller) => s.InviteAsync(caller, studyId, request, cancellationToken));

    public Task<Outcome<IReadOnlyList<InvitationDto>>> ListInvitationsAsync(int studyId, CancellationToken cancellationToken = default) =>
        calls.RunAsync<MembershipService, IReadOnlyList<InvitationDto>>((s, caller) => s.ListInvitationsAsync(caller, studyId, cancellationToken));

    public Task<Outcome<InvitationDto>> RevokeInvitationAsync(int studyId, int invitationId, CancellationToken cancellationToken = default) =>
        calls.RunAsync<MembershipService, InvitationDto>((s, caller) => s.RevokeInvitationAsync(caller, studyId, invitationId, cancellationToken));
}
