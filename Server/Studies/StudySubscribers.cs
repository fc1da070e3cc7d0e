using System.Collections.Concurrent;

namespace Runfold.Server.Studies;

/// <summary>
/// Callbacks per study. Each is called on the thread pool, never on the notifier's thread, so a slow page cannot
/// slow a claim, and a failing one is logged without touching the others.
/// </summary>
internal sealed class StudySubscribers<T>(ILogger logger, string what)
{
    private readonly ConcurrentDictionary<int, ConcurrentDictionary<Guid, Func<T, Task>>> _byStudy = new();

    /// <summary>The studies with at least one subscriber.</summary>
    public IReadOnlyList<int> Studies => [.. _byStudy.Where(s => !s.Value.IsEmpty).Select(s => s.Key)];

    public IDisposable Subscribe(int studyId, Func<T, Task> callback)
    {
        ArgumentNullException.ThrowIfNull(callback);
        var id = Guid.NewGuid();
        _byStudy.GetOrAdd(studyId, _ => new()).TryAdd(id, callback);
        return new Subscription(() =>
        {
            if (_byStudy.TryGetValue(studyId, out var callbacks)) callbacks.TryRemove(id, out _);
        });
    }

    public void Notify(int studyId, T value)
    {
        if (!_byStudy.TryGetValue(studyId, out var callbacks)) return;
        foreach (var callback in callbacks.Values)
            _ = Task.Run(async () =>
            {
                try { await callback(value); }
#pragma warning disable CA1031 // a failing subscriber must not break the others
                catch (Exception e) { SubscriberLog.Failed(logger, what, studyId, e); }
#pragma warning restore CA1031
            });
    }

    private sealed class Subscription(Action dispose) : IDisposable
    {
        private Action? _dispose = dispose;

        public void Dispose() => Interlocked.Exchange(ref _dispose, null)?.Invoke();
    }
}

internal static partial class SubscriberLog
{
    [LoggerMessage(Level = LogLevel.Warning, Message = "A {What} of study {StudyId} failed")]
    public static partial void Failed(ILogger logger, string what, int studyId, Exception exception);
}
