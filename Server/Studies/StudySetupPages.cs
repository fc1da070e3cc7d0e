using Runfold.Server.Hosting;
using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Server.Studies;

/// <summary>The set-up page's calls: the preview answers like <c>POST /api/designs/preview</c>, creation like
/// <c>POST /api/studies</c> (same services, the caller is the page's signed-in person).</summary>
public sealed class StudySetupPages(PageCalls calls, DesignLimits limits) : IStudySetup
{
    public async Task<bool> CanCreateAsync(CancellationToken cancellationToken = default) =>
        (await calls.CallerAsync())?.IsAdmin == true;

    public async Task<Outcome<DesignPreview>> PreviewAsync(DesignPreviewRequest request, CancellationToken cancellationToken = default)
    {
        if (await calls.CallerAsync() is null) return Outcome<DesignPreview>.Forbidden(PageCalls.SignedOut);
        // Generating a large maximin design takes a moment: off the circuit's thread, so the page stays responsive.
        return await Task.Run(() => DesignPreviews.Preview(request, limits), cancellationToken);
    }

    public Task<Outcome<StudyDetail>> CreateAsync(CreateStudyRequest request, CancellationToken cancellationToken = default) =>
        calls.RunAsync<StudyService, StudyDetail>((s, caller) => s.CreateAsync(caller, request, cancellationToken));
}
