using Runfold.Server.Hosting;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Sharing;

/// <summary>The lead's share links for the pages, through the same service as the API.</summary>
public sealed class ShareLinkPages(PageCalls calls) : IShareLinks
{
    public Task<Outcome<ShareLinkDto>> CreateAsync(int studyId, ShareLinkRequest request, CancellationToken cancellationToken = default) =>
        calls.RunAsync<ShareLinkService, ShareLinkDto>((links, caller) => links.CreateAsync(caller, studyId, request, cancellationToken));

    public Task<Outcome<IReadOnlyList<ShareLinkDto>>> ListAsync(int studyId, CancellationToken cancellationToken = default) =>
        calls.RunAsync<ShareLinkService, IReadOnlyList<ShareLinkDto>>((links, caller) => links.ListAsync(caller, studyId, cancellationToken));

    public Task<Outcome<ShareLinkDto>> RevokeAsync(int studyId, int linkId, CancellationToken cancellationToken = default) =>
        calls.RunAsync<ShareLinkService, ShareLinkDto>((links, caller) => links.RevokeAsync(caller, studyId, linkId, cancellationToken));
}

/// <summary>A share link's page, without an account: each call takes its own service scope (the circuit lives
/// long) and checks the link again. The page follows study changes and new analysis snapshots.</summary>
public sealed class SharedStudyPages(IServiceScopeFactory scopes, IStudyUpdates updates, IStudyAnalysis analysis) : ISharedStudies
{
    public async Task<Outcome<SharedSummary>> OpenAsync(string token, CancellationToken cancellationToken = default)
    {
        await using var scope = scopes.CreateAsyncScope();
        return await scope.ServiceProvider.GetRequiredService<ShareLinkService>().OpenAsync(token, cancellationToken);
    }

    public IDisposable Watch(int studyId, Func<Task> changed)
    {
        var studyChanges = updates.Watch(studyId, changed);
        var snapshots = analysis.Follow(studyId, e => e.Kind == StudyLiveEventKind.Snapshot ? changed() : Task.CompletedTask);
        return new Both(studyChanges, snapshots);
    }

    private sealed class Both(IDisposable first, IDisposable second) : IDisposable
    {
        public void Dispose()
        {
            first.Dispose();
            second.Dispose();
        }
    }
}
