using Runfold.Server.Hosting;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Reports;

/// <summary>
/// <see cref="IStudyAnalysis"/> read from the stored snapshot rows, for a server where the live analysis (the
/// worker that fits the surrogates and writes the snapshots) is not registered: the latest snapshot, its history
/// and study changes as they happen. It holds no fitted models, so predictions and new waves are refused with a
/// sentence. Registered with TryAdd, so the live analysis replaces it.
/// </summary>
public sealed class StoredSnapshotAnalysis(PageCalls calls, StudyChangeHub changes) : IStudyAnalysis
{
    public const string NoLiveAnalysis =
        "This server does not run the live analysis, so it holds no fitted models to predict from or to plan a wave with; it shows the stored snapshots only.";

    public Task<Outcome<AnalysisSnapshotDto?>> GetLatestAsync(int studyId, CancellationToken cancellationToken = default) =>
        calls.RunAsync<StoredSnapshots, AnalysisSnapshotDto?>((snapshots, caller) => snapshots.LatestAsync(caller, studyId, cancellationToken));

    public Task<Outcome<IReadOnlyList<AnalysisHistoryPointDto>>> GetHistoryAsync(int studyId, CancellationToken cancellationToken = default) =>
        calls.RunAsync<StoredSnapshots, IReadOnlyList<AnalysisHistoryPointDto>>((snapshots, caller) => snapshots.HistoryAsync(caller, studyId, cancellationToken));

    public Task<Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>> PredictAsync(int studyId, PredictRequest request,
        CancellationToken cancellationToken = default) =>
        Task.FromResult(Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>.Unprocessable(ValidationErrors.Single("points", NoLiveAnalysis)));

    public Task<Outcome<IReadOnlyList<RunDto>>> AddWaveAsync(int studyId, WaveRequest request, CancellationToken cancellationToken = default) =>
        Task.FromResult(Outcome<IReadOnlyList<RunDto>>.Unprocessable(ValidationErrors.Single("kind", NoLiveAnalysis)));

    public AnalysisProgressDto? CurrentProgress(int studyId) => null;

    public IDisposable Follow(int studyId, Func<StudyLiveEvent, Task> onEvent)
    {
        ArgumentNullException.ThrowIfNull(onEvent);
        return changes.Subscribe(studyId, change => onEvent(new StudyLiveEvent(studyId, StudyLiveEventKind.Changed, change.ResultSetVersion)));
    }
}
