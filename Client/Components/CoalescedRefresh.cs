namespace Runfold.Client.Components;

/// <summary>
/// Re-reads a page at most once per <c>gap</c> however many changes arrive: a study with busy cluster jobs
/// publishes a change per claim and heartbeat, and a page that re-read 10,000 runs for each would fall behind.
/// The first change schedules a refresh after the gap; changes until then ride along with it.
/// </summary>
public sealed class CoalescedRefresh(Func<Task> refresh, TimeSpan gap) : IDisposable
{
    private readonly CancellationTokenSource _stop = new();
    private int _scheduled;

    public void Poke()
    {
        if (_stop.IsCancellationRequested || Interlocked.Exchange(ref _scheduled, 1) == 1) return;
        _ = RunAsync();
    }

    private async Task RunAsync()
    {
        try
        {
            await Task.Delay(gap, _stop.Token);
            Volatile.Write(ref _scheduled, 0);
            await refresh();
        }
        catch (OperationCanceledException)
        {
            // the page was closed
        }
        catch (ObjectDisposedException)
        {
            // the page's circuit went away while refreshing
        }
    }

    public void Dispose()
    {
        _stop.Cancel();
        _stop.Dispose();
    }
}
