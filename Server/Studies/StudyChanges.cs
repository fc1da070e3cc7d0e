using Runfold.Shared.Studies;

namespace Runfold.Server.Studies;

/// <summary>What kind of change a study went through. <see cref="Results"/> and <see cref="Runs"/> changes bump
/// the study's result-set version (the analysis reads them); <see cref="Claims"/> and <see cref="Members"/>
/// changes do not.</summary>
public enum StudyChangeKind
{
    /// <summary>Claims, heartbeats, releases, assignments, lapsed leases: who holds which run.</summary>
    Claims,
    /// <summary>A result revision was stored or a failed run reopened.</summary>
    Results,
    /// <summary>Runs were added (a wave) or the study's definition changed.</summary>
    Runs,
    /// <summary>Members, roles, invitations or settings that do not touch runs.</summary>
    Members,
}

/// <summary>A committed change of a study. <see cref="ResultSetVersion"/> is the version after the change.</summary>
public sealed record StudyChange(int StudyId, StudyChangeKind Kind, long ResultSetVersion);

/// <summary>
/// Raised after a change of a study is committed. <see cref="StudyChangeHub"/> tells this server instance; the
/// PostgreSQL fan-out (Server/Live) carries each change to the other instances, which deliver it to theirs.
/// </summary>
public interface IStudyChangeNotifier
{
    void Publish(StudyChange change);
}

/// <summary>
/// Study changes on this server instance: the pages watching a study (<see cref="IStudyUpdates"/>) and the
/// listeners of <see cref="Delivered"/> hear both the changes committed here and those another instance committed.
/// </summary>
public sealed class StudyChangeHub(ILogger<StudyChangeHub> logger) : IStudyChangeNotifier, IStudyUpdates
{
    private readonly StudySubscribers<StudyChange> _watchers = new(logger, "page watching the changes");

    /// <summary>Every change committed on this instance: the hook of the fan-out to the other instances.</summary>
    public event Action<StudyChange>? Changed;

    /// <summary>Every change of any study, committed here or on another instance (the live analysis listens).</summary>
    public event Action<StudyChange>? Delivered;

    /// <summary>The studies some page of this instance watches.</summary>
    public IReadOnlyList<int> WatchedStudies => _watchers.Studies;

    public void Publish(StudyChange change)
    {
        ArgumentNullException.ThrowIfNull(change);
        Changed?.Invoke(change);
        Deliver(change);
    }

    /// <summary>Tells this instance of a change: called by <see cref="Publish"/> and for changes of other instances.</summary>
    public void Deliver(StudyChange change)
    {
        ArgumentNullException.ThrowIfNull(change);
        Delivered?.Invoke(change);
        _watchers.Notify(change.StudyId, change);
    }

    public IDisposable Subscribe(int studyId, Func<StudyChange, Task> changed) => _watchers.Subscribe(studyId, changed);

    public IDisposable Watch(int studyId, Func<Task> changed) => Subscribe(studyId, _ => changed());
}
