using System.Data.Common;
using System.Diagnostics;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Telemetry;
using Runfold.Shared.Studies;

namespace Runfold.Server.Analysis;

/// <summary>
/// The analysis of one study on this instance. New results only mark the study pending; a refit starts once none
/// has come for <see cref="AnalysisOptions.Debounce"/>, or once the oldest waiting one has waited
/// <see cref="AnalysisOptions.MaxWait"/>, so a burst of uploads gives one or two refits. A refit overtaken by a
/// newer result is cancelled and started again with it — unless its results have already waited the longest
/// allowed, so a steady stream of results cannot starve the snapshot.
/// <para>
/// Two tiers. A refit keeps each response's chosen model and refits it with its hyper-parameters (milliseconds);
/// every model is compared again (seconds: <c>SurrogateSelection</c>) in the foreground when a response has no
/// choice yet or its choice no longer applies, or always when the last comparison was cheap; and in the
/// background, beside the refits, when the done runs have grown by <see cref="AnalysisOptions.RecompareGrowth"/>
/// since the last comparison or a refit's cross-validated error grew by <see cref="AnalysisOptions.RecompareErrorGrowth"/>.
/// A finished background comparison becomes the next snapshot when no newer result came, otherwise its choices
/// refit the newest runs at once. The background comparison is not cancelled by new results (it would never
/// finish under a steady stream).
/// </para>
/// </summary>
internal sealed partial class StudyWorker(int studyId, AnalysisCoordinator.WorkerParts parts)
{
    private readonly Lock _gate = new();
    private readonly SemaphoreSlim _wake = new(0, 1);

    // Guarded by _gate.
    private long _wanted = -1;
    private long _covered = -1;
    private long? _pendingSince;
    private long _lastEventAt;
    private bool _immediate;
    private bool _sweep;
    private bool _rechoose;
    private CancellationTokenSource? _running;
    private long _runningVersion;
    private long? _batchSince;
    private FinishedComparison? _finished;
    private Task? _comparison;
    private bool _loopRunning;
    private Task _loop = Task.CompletedTask;

    // Only the loop touches these.
    private bool _owner;
    private ModelChoices _choices = ModelChoices.None;
    private CancellationTokenSource? _comparisonStop;

    private AnalysisOptions Options => parts.Options;

    public Task Completion
    {
        get
        {
            lock (_gate) return Task.WhenAll(_loop, _comparison ?? Task.CompletedTask);
        }
    }

    public void Nudge(long resultSetVersion, bool immediate)
    {
        lock (_gate)
        {
            var now = Stopwatch.GetTimestamp();
            _wanted = Math.Max(_wanted, resultSetVersion);
            _pendingSince ??= now;
            _lastEventAt = now;
            if (immediate) _immediate = _sweep = true;
            if (_running is not null && resultSetVersion > _runningVersion && _batchSince is { } since
                && Stopwatch.GetElapsedTime(since, now) < Options.MaxWait)
                _running.Cancel();
        }
        Wake();
    }

    public void EnsureRunning(CancellationToken stopping)
    {
        lock (_gate)
        {
            if (_loopRunning) return;
            _loopRunning = true;
            _loop = Task.Run(() => RunAsync(stopping), CancellationToken.None);
        }
    }

    public static bool IsStorageFailure(Exception e) => e is DbException or DbUpdateException or TimeoutException or InvalidOperationException { InnerException: DbException };

    private void Wake()
    {
        lock (_gate)
            if (_wake.CurrentCount == 0) _wake.Release();
    }

    private async Task RunAsync(CancellationToken stopping)
    {
        try
        {
            while (!stopping.IsCancellationRequested)
            {
                TimeSpan wait;
                lock (_gate) wait = NextWait();
                if (wait == Timeout.InfiniteTimeSpan)
                {
                    if (await _wake.WaitAsync(Options.IdleRelease, stopping)) continue;
                    if (await IdleAsync(stopping)) return;
                    continue;
                }
                if (wait > TimeSpan.Zero)
                {
                    await _wake.WaitAsync(wait, stopping); // a newer result may move the start further out
                    continue;
                }
                try
                {
                    await WorkAsync(stopping);
                }
                catch (Exception e) when (IsStorageFailure(e))
                {
                    // The database is away: try again shortly (the sweep also comes back to the study).
                    Log.StorageFailed(parts.Logger, studyId, e);
                    lock (_gate) _pendingSince ??= Stopwatch.GetTimestamp();
                    await Task.Delay(TimeSpan.FromSeconds(1), stopping);
                }
            }
        }
        catch (OperationCanceledException) when (stopping.IsCancellationRequested)
        {
        }
        finally
        {
            _comparisonStop?.Cancel();
            lock (_gate) _loopRunning = false;
        }
    }

    /// <summary>How long until the next refit should start: zero now, infinite when nothing waits.</summary>
    private TimeSpan NextWait()
    {
        if (_finished is not null) return TimeSpan.Zero;
        if (_wanted <= _covered && !_sweep && !_rechoose) return Timeout.InfiniteTimeSpan;
        if (_immediate || _rechoose) return TimeSpan.Zero;
        var quiet = Options.Debounce - Stopwatch.GetElapsedTime(_lastEventAt);
        var capped = Options.MaxWait - (_pendingSince is { } since ? Stopwatch.GetElapsedTime(since) : TimeSpan.Zero);
        var wait = quiet < capped ? quiet : capped;
        return wait > TimeSpan.Zero ? wait : TimeSpan.Zero;
    }

    /// <summary>Nothing to do for a while: give the study's lock back. True when the loop may end.</summary>
    private async Task<bool> IdleAsync(CancellationToken stopping)
    {
        lock (_gate)
            if (NextWait() != Timeout.InfiniteTimeSpan || _comparison is { IsCompleted: false }) return false;
        if (_owner)
        {
            await parts.Locks.ReleaseAsync(studyId, stopping);
            _owner = false;
            _choices = ModelChoices.None;
        }
        lock (_gate)
        {
            if (NextWait() != Timeout.InfiniteTimeSpan) return false;
            _loopRunning = false;
            return true;
        }
    }

    private async Task WorkAsync(CancellationToken stopping)
    {
        if (!await EnsureOwnerAsync(stopping)) return;
        FinishedComparison? finished;
        lock (_gate) (finished, _finished) = (_finished, null);
        if (finished is not null) await AdoptAsync(finished, stopping);
        else await RefitAsync(stopping);
    }

    private async Task<bool> EnsureOwnerAsync(CancellationToken stopping)
    {
        if (_owner) return true;
        if (!await parts.Locks.TryAcquireAsync(studyId, stopping))
        {
            // Another instance works this study: it computes and pushes the snapshot.
            lock (_gate)
            {
                _covered = Math.Max(_covered, _wanted);
                (_immediate, _sweep, _rechoose, _pendingSince, _finished) = (false, false, false, null, null);
            }
            return false;
        }
        // Taking the study over (first work here, or after another instance stopped): go on from its latest snapshot.
        var (choices, covered) = await parts.LatestAsync(studyId, stopping);
        _choices = choices;
        _owner = true;
        lock (_gate) _covered = covered;
        return true;
    }

    private void LoseOwnership()
    {
        _owner = false;
        _choices = ModelChoices.None;
        _comparisonStop?.Cancel();
        lock (_gate) _covered = Math.Max(_covered, _wanted);
    }

    private async Task RefitAsync(CancellationToken stopping)
    {
        using var cancel = CancellationTokenSource.CreateLinkedTokenSource(stopping);
        bool rechoose;
        long wanted;
        lock (_gate)
        {
            (_running, _runningVersion, _batchSince, _pendingSince) = (cancel, long.MaxValue, _pendingSince, null);
            (_immediate, _sweep) = (false, false);
            (rechoose, _rechoose) = (_rechoose, false);
            wanted = _wanted;
        }
        // Until its runs are read, the refit works on the newest result-set version this instance has heard of.
        var progress = new RefitProgress(parts.Live, studyId, Options.ProgressAfter) { ResultSetVersion = wanted };
        var started = Stopwatch.GetTimestamp();
        parts.Statistics.Started();
        AnalysisInput? input = null;
        try
        {
            input = await parts.Builder.ReadAsync(studyId, progress, cancel.Token);
            if (input is null)
            {
                lock (_gate) _covered = Math.Max(_covered, _wanted); // the study is gone
                return;
            }
            bool current;
            lock (_gate)
            {
                _runningVersion = input.ResultSetVersion;
                current = input.ResultSetVersion <= _covered && !rechoose;
                // A result committed after the read began is not in it: overtaken already.
                if (_wanted > input.ResultSetVersion && _batchSince is { } since && Stopwatch.GetElapsedTime(since) < Options.MaxWait)
                    cancel.Cancel();
            }
            if (current)
            {
                progress.Stopped(); // a snapshot of these results exists
                return;
            }
            var compareAll = _choices.LastComparison is { } last && last < Options.AlwaysCompareBelow;
            var work = await parts.Builder.FitAsync(input, compareAll ? null : _choices, progress, SnapshotBuilder.Fitting, cancel.Token);
            var comparedAll = work.Models.All(m => m.ComparedNow);
            lock (_gate) _running = null; // computed: store it even if a newer result arrives now
            await StoreAsync(work, started, comparedAll ? Stopwatch.GetElapsedTime(started) : null, progress, stopping);
        }
        catch (OperationCanceledException) when (!stopping.IsCancellationRequested)
        {
            parts.Statistics.Cancelled();
            progress.Stopped();
            lock (_gate) _pendingSince = _batchSince ?? _pendingSince ?? Stopwatch.GetTimestamp();
        }
        catch (Exception e) when (input is not null && e is not OperationCanceledException && !IsStorageFailure(e))
        {
            Log.RefitFailed(parts.Logger, studyId, input.ResultSetVersion, e);
            await StoreAsync(SnapshotBuilder.Failed(input, e), started, null, progress, stopping);
        }
        finally
        {
            lock (_gate) _running = null;
        }
    }

    /// <summary>Stores a computed snapshot (after checking the lock is still this instance's), keeps its models in
    /// memory, pushes snapshot-ready to every instance and decides whether every model is to be compared again.</summary>
    private async Task StoreAsync(AnalysisWork work, long started, TimeSpan? comparedAllIn, RefitProgress progress, CancellationToken stopping)
    {
        if (!await parts.Locks.StillHeldAsync(studyId, stopping))
        {
            progress.Stopped();
            LoseOwnership();
            return;
        }
        var before = _choices;
        var stored = await parts.Builder.StoreAsync(work, before, progress, stopping);
        var input = work.Input;
        if (stored is null)
        {
            progress.Stopped();
            lock (_gate) _covered = Math.Max(_covered, input.ResultSetVersion);
            return;
        }
        _choices = new ModelChoices(stored.Choices.ByResponse, comparedAllIn ?? before.LastComparison);
        lock (_gate) _covered = Math.Max(_covered, input.ResultSetVersion);
        parts.Models.Put(new SnapshotModels(studyId, stored.Snapshot.Version, input.Space, stored.Models));
        parts.Live.Publish(new StudyLiveEvent(studyId, StudyLiveEventKind.Snapshot, input.ResultSetVersion, stored.Snapshot.Version));
        parts.Statistics.Stored();
        var took = Stopwatch.GetElapsedTime(started);
        Log.SnapshotStored(parts.Logger, studyId, stored.Snapshot.Version, stored.Snapshot.BasedOnRuns, (long)took.TotalMilliseconds, work.DescribeTimings());
        RunfoldMetrics.RefitDuration(took);
        if (input.NewestResultAt is { } newest) RunfoldMetrics.SnapshotLag(stored.Snapshot.ComputedAt - newest);
        if (ComparisonDue(work, before)) StartComparison(input, stopping);
    }

    /// <summary>A refit kept some choice although the runs grew enough since it was made, or its error grew.</summary>
    private bool ComparisonDue(AnalysisWork work, ModelChoices before)
    {
        foreach (var model in work.Models)
        {
            if (model.ComparedNow || model.Choice is not { } choice || model.Surrogate is not { } surrogate) continue;
            var grown = Math.Abs(model.Data.Count - choice.ComparedAtRuns);
            if (grown >= Math.Max(Options.RecompareMinRuns, (int)Math.Ceiling(Options.RecompareGrowth * choice.ComparedAtRuns))) return true;
            if (before.Of(model.Response.Name) is { } previous && surrogate.Check.CvRmse > Options.RecompareErrorGrowth * previous.CvRmse) return true;
        }
        return false;
    }

    private void StartComparison(AnalysisInput input, CancellationToken stopping)
    {
        lock (_gate)
        {
            if (_comparison is { IsCompleted: false } || _finished is not null) return;
            _comparisonStop?.Dispose();
            var stop = _comparisonStop = CancellationTokenSource.CreateLinkedTokenSource(stopping);
            _comparison = Task.Run(() => CompareAsync(input, stop.Token), CancellationToken.None);
        }
    }

    private async Task CompareAsync(AnalysisInput input, CancellationToken cancellationToken)
    {
        var progress = new RefitProgress(parts.Live, studyId, Options.ProgressAfter) { ResultSetVersion = input.ResultSetVersion };
        var started = Stopwatch.GetTimestamp();
        try
        {
            var work = await parts.Builder.FitAsync(input, null, progress, SnapshotBuilder.Comparing, cancellationToken);
            parts.Statistics.Compared();
            lock (_gate) _finished = new FinishedComparison(work, started, Stopwatch.GetElapsedTime(started), progress);
            Wake();
        }
        catch (OperationCanceledException)
        {
            progress.Stopped();
        }
#pragma warning disable CA1031 // a failed background comparison leaves the kept choices in place; the next one tries again
        catch (Exception e)
        {
            progress.Stopped();
            Log.ComparisonFailed(parts.Logger, studyId, e);
        }
#pragma warning restore CA1031
    }

    /// <summary>A background comparison finished: it becomes the snapshot of its runs when they are still the
    /// newest; otherwise its choices refit the newest runs right away.</summary>
    private async Task AdoptAsync(FinishedComparison finished, CancellationToken stopping)
    {
        var input = finished.Work.Input;
        bool newest;
        lock (_gate) newest = input.ResultSetVersion >= _covered && _wanted <= input.ResultSetVersion;
        if (newest)
        {
            await StoreAsync(finished.Work, finished.Started, finished.Duration, finished.Progress, stopping);
            return;
        }
        finished.Progress.Stopped();
        var chosen = finished.Work.Models.Where(m => m.Choice is not null).ToDictionary(m => m.Response.Name, m => m.Choice!);
        _choices = new ModelChoices(chosen, finished.Duration);
        lock (_gate) _rechoose = true;
    }

    private sealed record FinishedComparison(AnalysisWork Work, long Started, TimeSpan Duration, RefitProgress Progress);

    private static partial class Log
    {
        [LoggerMessage(Level = LogLevel.Warning, Message = "Study {StudyId}: the analysis could not reach the database; trying again")]
        public static partial void StorageFailed(ILogger logger, int studyId, Exception exception);

        [LoggerMessage(Level = LogLevel.Error, Message = "Study {StudyId}: the refit of result-set version {Version} failed")]
        public static partial void RefitFailed(ILogger logger, int studyId, long version, Exception exception);

        [LoggerMessage(Level = LogLevel.Warning, Message = "Study {StudyId}: the background comparison of every model failed")]
        public static partial void ComparisonFailed(ILogger logger, int studyId, Exception exception);

        [LoggerMessage(Level = LogLevel.Information, Message = "Study {StudyId}: snapshot {Version} of {Runs} runs stored {Milliseconds} ms after the refit started ({Timings})")]
        public static partial void SnapshotStored(ILogger logger, int studyId, int version, int runs, long milliseconds, string timings);
    }
}
