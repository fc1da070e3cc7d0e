using System.Collections.Concurrent;
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
/// Raised after a change of a study is committed. This in-process implementation tells the pages of this server
/// instance; a fan-out across instances (PostgreSQL LISTEN/NOTIFY) can replace or decorate it without touching the
/// services that raise it.
/// </summary>
public interface IStudyChangeNotifier
{
    void Publish(StudyChange change);
}

/// <summary>In-process study changes: subscribers are called on the thread pool, never on the publisher's thread,
/// so a slow page cannot slow a claim.</summary>
public sealed partial class StudyChangeHub(ILogger<StudyChangeHub> logger) : IStudyChangeNotifier, IStudyUpdates
{
    private readonly ConcurrentDictionary<int, ConcurrentDictionary<Guid, Func<StudyChange, Task>>> _watchers = new();

    /// <summary>Every change, for listeners that follow all studies (the live analysis, fan-out).</summary>
    public event Action<StudyChange>? Changed;

    public void Publish(StudyChange change)
    {
        ArgumentNullException.ThrowIfNull(change);
        Changed?.Invoke(change);
        if (!_watchers.TryGetValue(change.StudyId, out var watchers)) return;
        foreach (var watcher in watchers.Values)
            _ = Task.Run(async () =>
            {
                try { await watcher(change); }
#pragma warning disable CA1031 // a failing page must not break the others
                catch (Exception e) { Log.WatcherFailed(logger, change.StudyId, e); }
#pragma warning restore CA1031
            });
    }

    public IDisposable Subscribe(int studyId, Func<StudyChange, Task> changed)
    {
        var id = Guid.NewGuid();
        _watchers.GetOrAdd(studyId, _ => new()).TryAdd(id, changed);
        return new Subscription(() =>
        {
            if (_watchers.TryGetValue(studyId, out var watchers)) watchers.TryRemove(id, out _);
        });
    }

    public IDisposable Watch(int studyId, Func<Task> changed) => Subscribe(studyId, _ => changed());

    private sealed class Subscription(Action dispose) : IDisposable
    {
        private Action? _dispose = dispose;

        public void Dispose() => Interlocked.Exchange(ref _dispose, null)?.Invoke();
    }

    private static partial class Log
    {
        [LoggerMessage(Level = LogLevel.Warning, Message = "A page watching study {StudyId} failed to refresh")]
        public static partial void WatcherFailed(ILogger logger, int studyId, Exception exception);
    }
}
