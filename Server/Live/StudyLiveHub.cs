using System.Collections.Concurrent;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Live;

/// <summary>
/// The live events of every study on this server instance, for the pages (<c>IStudyAnalysis.Follow</c>) and the
/// server-sent-event streams: committed changes (from <see cref="StudyChangeHub"/>, of this instance or another),
/// snapshot-ready and refit progress (from the analysis worker, wherever it runs). Events raised here go to the
/// other instances through <see cref="Published"/>, which the PostgreSQL fan-out listens to.
/// </summary>
public sealed class StudyLiveHub : IDisposable
{
    private readonly StudyChangeHub _changes;
    private readonly StudySubscribers<StudyLiveEvent> _followers;
    private readonly ConcurrentDictionary<int, AnalysisProgressDto> _progress = new();

    public StudyLiveHub(StudyChangeHub changes, ILogger<StudyLiveHub> logger)
    {
        _changes = changes;
        _followers = new StudySubscribers<StudyLiveEvent>(logger, "live follower");
        _changes.Delivered += OnChange;
    }

    /// <summary>Snapshot and progress events raised on this instance, for the fan-out to the others.</summary>
    public event Action<StudyLiveEvent>? Published;

    /// <summary>The studies some page or stream of this instance follows.</summary>
    public IReadOnlyList<int> FollowedStudies => _followers.Studies;

    public IDisposable Follow(int studyId, Func<StudyLiveEvent, Task> onEvent) => _followers.Subscribe(studyId, onEvent);

    /// <summary>The refit under way for the study, as last reported by whichever instance runs it.</summary>
    public AnalysisProgressDto? CurrentProgress(int studyId) => _progress.GetValueOrDefault(studyId);

    /// <summary>An event of this instance's analysis: told here and sent to the other instances.</summary>
    public void Publish(StudyLiveEvent liveEvent)
    {
        ArgumentNullException.ThrowIfNull(liveEvent);
        Published?.Invoke(liveEvent);
        Deliver(liveEvent);
    }

    /// <summary>Tells this instance's followers (also for events of other instances).</summary>
    public void Deliver(StudyLiveEvent liveEvent)
    {
        ArgumentNullException.ThrowIfNull(liveEvent);
        switch (liveEvent.Kind)
        {
            case StudyLiveEventKind.Progress when liveEvent.Progress is { } progress:
                _progress.AddOrUpdate(liveEvent.StudyId, progress, (_, old) => progress.ResultSetVersion >= old.ResultSetVersion ? progress : old);
                break;
            case StudyLiveEventKind.Progress: // without progress: the refit stopped without a snapshot
            case StudyLiveEventKind.Snapshot:
                if (_progress.TryGetValue(liveEvent.StudyId, out var current) && current.ResultSetVersion <= liveEvent.ResultSetVersion)
                    _progress.TryRemove(KeyValuePair.Create(liveEvent.StudyId, current));
                break;
        }
        _followers.Notify(liveEvent.StudyId, liveEvent);
    }

    private void OnChange(StudyChange change) =>
        _followers.Notify(change.StudyId, new StudyLiveEvent(change.StudyId, StudyLiveEventKind.Changed, change.ResultSetVersion));

    public void Dispose() => _changes.Delivered -= OnChange;
}
