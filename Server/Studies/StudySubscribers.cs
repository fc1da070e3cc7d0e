using System.Collections.Concurrent;

namespace Runfold.Server.Studies;

/// <summary>
/// Callbacks per study. Each subscriber gets the values in the order they were notified, on the thread pool and
/// never on the notifier's thread, so a slow page cannot slow a claim; a failing callback is logged without
/// touching the others.
/// </summary>
internal sealed class StudySubscribers<T>(ILogger logger, string what)
{
    private readonly ConcurrentDictionary<int, ConcurrentDictionary<Guid, Subscriber>> _byStudy = new();
    private readonly ILogger _logger = logger;
    private readonly string _what = what;

    /// <summary>The studies with at least one subscriber.</summary>
    public IReadOnlyList<int> Studies => [.. _byStudy.Where(s => !s.Value.IsEmpty).Select(s => s.Key)];

    public IDisposable Subscribe(int studyId, Func<T, Task> callback)
    {
        ArgumentNullException.ThrowIfNull(callback);
        var id = Guid.NewGuid();
        _byStudy.GetOrAdd(studyId, _ => new()).TryAdd(id, new Subscriber(this, studyId, callback));
        return new Subscription(() =>
        {
            if (_byStudy.TryGetValue(studyId, out var subscribers)) subscribers.TryRemove(id, out _);
        });
    }

    public void Notify(int studyId, T value)
    {
        if (!_byStudy.TryGetValue(studyId, out var subscribers)) return;
        foreach (var subscriber in subscribers.Values) subscriber.Post(value);
    }

    /// <summary>One subscriber's queue, drained by at most one task at a time.</summary>
    private sealed class Subscriber(StudySubscribers<T> owner, int studyId, Func<T, Task> callback)
    {
        private readonly ConcurrentQueue<T> _queue = new();
        private int _draining;

        public void Post(T value)
        {
            _queue.Enqueue(value);
            if (Interlocked.CompareExchange(ref _draining, 1, 0) == 0) _ = Task.Run(DrainAsync);
        }

        private async Task DrainAsync()
        {
            while (true)
            {
                while (_queue.TryDequeue(out var value))
                {
                    try { await callback(value); }
#pragma warning disable CA1031 // a failing subscriber must not break the others
                    catch (Exception e) { SubscriberLog.Failed(owner._logger, owner._what, studyId, e); }
#pragma warning restore CA1031
                }
                Volatile.Write(ref _draining, 0);
                // A value posted between the last dequeue and the reset above is drained here, unless a new drain took it.
                if (_queue.IsEmpty || Interlocked.CompareExchange(ref _draining, 1, 0) != 0) return;
            }
        }
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
