using Runfold.Server.Hosting;
using Runfold.Server.Live;
using Runfold.Shared.Studies;

namespace Runfold.Server.Analysis;

/// <summary>The pages' analysis: the same service as the API (one scope per call, the circuit's person as caller),
/// and the live events of this instance's hub, which carries those of every instance.</summary>
public sealed class AnalysisPages(PageCalls calls, StudyLiveHub live) : IStudyAnalysis
{
    public Task<Outcome<AnalysisSnapshotDto?>> GetLatestAsync(int studyId, CancellationToken cancellationToken = default) =>
        calls.RunAsync<StudyAnalysisService, AnalysisSnapshotDto?>((s, caller) => s.GetLatestAsync(caller, studyId, cancellationToken));

    public Task<Outcome<IReadOnlyList<AnalysisHistoryPointDto>>> GetHistoryAsync(int studyId, CancellationToken cancellationToken = default) =>
        calls.RunAsync<StudyAnalysisService, IReadOnlyList<AnalysisHistoryPointDto>>((s, caller) => s.GetHistoryAsync(caller, studyId, cancellationToken));

    public Task<Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>> PredictAsync(int studyId, PredictRequest request,
        CancellationToken cancellationToken = default) =>
        calls.RunAsync<StudyAnalysisService, IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>((s, caller) => s.PredictAsync(caller, studyId, request, cancellationToken));

    public Task<Outcome<IReadOnlyList<RunDto>>> AddWaveAsync(int studyId, WaveRequest request, CancellationToken cancellationToken = default) =>
        calls.RunAsync<StudyAnalysisService, IReadOnlyList<RunDto>>((s, caller) => s.AddWaveAsync(caller, studyId, request, cancellationToken));

    public AnalysisProgressDto? CurrentProgress(int studyId) => live.CurrentProgress(studyId);

    public IDisposable Follow(int studyId, Func<StudyLiveEvent, Task> onEvent) => live.Follow(studyId, onEvent);
}
