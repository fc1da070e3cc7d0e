using System.Collections.Concurrent;
using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Server.Live;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Analysis;

/// <summary>What this instance's analysis has done, for tests and logs.</summary>
public sealed class AnalysisStatistics
{
    private long _started;
    private long _cancelled;
    private long _stored;
    private long _comparisons;

    public long RefitsStarted => Interlocked.Read(ref _started);

    /// <summary>Refits cancelled because a newer result overtook them.</summary>
    public long RefitsCancelled => Interlocked.Read(ref _cancelled);

    public long SnapshotsStored => Interlocked.Read(ref _stored);

    /// <summary>Background comparisons of every model that finished.</summary>
    public long Comparisons => Interlocked.Read(ref _comparisons);

    internal void Started() => Interlocked.Increment(ref _started);

    internal void Cancelled() => Interlocked.Increment(ref _cancelled);

    internal void Stored() => Interlocked.Increment(ref _stored);

    internal void Compared() => Interlocked.Increment(ref _comparisons);
}

/// <summary>
/// The live analysis of this server instance: one <see cref="StudyWorker"/> per study it has heard of, woken by
/// every change of results or runs (committed here or, through the fan-out, on another instance). Only the
/// instance holding a study's lock (<see cref="IAnalysisLocks"/>) refits it. Every <see cref="AnalysisOptions.Sweep"/>
/// (and at start-up, so the seeded demo has its first snapshot at once) it looks for studies whose latest
/// snapshot is behind their results and wakes their workers.
/// </summary>
public sealed partial class AnalysisCoordinator : BackgroundService
{
    private readonly ConcurrentDictionary<int, StudyWorker> _workers = new();
    private readonly StudyChangeHub _changes;
    private readonly IDbContextFactory<RunfoldDbContext> _contexts;
    private CancellationToken _stopping;
    private volatile bool _started;

    public AnalysisCoordinator(StudyChangeHub changes, SnapshotBuilder builder, IAnalysisLocks locks, FittedModelCache models,
        StudyLiveHub live, IDbContextFactory<RunfoldDbContext> contexts, AnalysisOptions options, ILogger<AnalysisCoordinator> logger)
    {
        _changes = changes;
        _contexts = contexts;
        Parts = new WorkerParts(builder, locks, models, live, contexts, options, Statistics, logger);
        _changes.Delivered += OnChange;
    }

    public AnalysisStatistics Statistics { get; } = new();

    internal WorkerParts Parts { get; }

    /// <summary>Wakes the study's worker: results of <paramref name="resultSetVersion"/> wait for a snapshot.
    /// <paramref name="immediate"/> skips the debounce and tries the study's lock even when this instance
    /// believes another one has it (the sweep).</summary>
    public void Nudge(int studyId, long resultSetVersion, bool immediate)
    {
        var worker = _workers.GetOrAdd(studyId, id => new StudyWorker(id, Parts));
        worker.Nudge(resultSetVersion, immediate);
        if (_started) worker.EnsureRunning(_stopping);
    }

    public override void Dispose()
    {
        _changes.Delivered -= OnChange;
        base.Dispose();
    }

    public override async Task StopAsync(CancellationToken cancellationToken)
    {
        await base.StopAsync(cancellationToken);
        // Let the workers see the stop before the database goes away under them.
        await Task.WhenAll(_workers.Values.Select(w => w.Completion)).WaitAsync(cancellationToken).ConfigureAwait(ConfigureAwaitOptions.SuppressThrowing);
    }

    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        _stopping = stoppingToken;
        _started = true;
        foreach (var worker in _workers.Values) worker.EnsureRunning(stoppingToken);
        using var timer = new PeriodicTimer(Parts.Options.Sweep);
        try
        {
            do
            {
                try
                {
                    await SweepAsync(stoppingToken);
                }
                catch (Exception e) when (StudyWorker.IsStorageFailure(e))
                {
                    Log.SweepFailed(Parts.Logger, e);
                }
            }
            while (await timer.WaitForNextTickAsync(stoppingToken));
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
        }
    }

    private void OnChange(StudyChange change)
    {
        if (change.Kind is StudyChangeKind.Results or StudyChangeKind.Runs) Nudge(change.StudyId, change.ResultSetVersion, immediate: false);
    }

    private async Task SweepAsync(CancellationToken cancellationToken)
    {
        await using var db = await _contexts.CreateDbContextAsync(cancellationToken);
        var behind = await db.Studies.Where(s => s.ResultSetVersion > 0)
            .Select(s => new
            {
                s.Id,
                s.ResultSetVersion,
                Covered = db.AnalysisSnapshots.Where(a => a.StudyId == s.Id).OrderByDescending(a => a.Version)
                    .Select(a => (long?)a.ResultSetVersion).FirstOrDefault(),
            })
            .Where(s => s.Covered == null || s.Covered < s.ResultSetVersion)
            .ToListAsync(cancellationToken);
        foreach (var study in behind) Nudge(study.Id, study.ResultSetVersion, immediate: true);
    }

    /// <summary>What every study worker of this instance shares.</summary>
    internal sealed record WorkerParts(
        SnapshotBuilder Builder,
        IAnalysisLocks Locks,
        FittedModelCache Models,
        StudyLiveHub Live,
        IDbContextFactory<RunfoldDbContext> Contexts,
        AnalysisOptions Options,
        AnalysisStatistics Statistics,
        ILogger Logger)
    {
        /// <summary>The latest stored snapshot's choices and result-set version (0 when there is none).</summary>
        public async Task<(ModelChoices Choices, long Covered)> LatestAsync(int studyId, CancellationToken cancellationToken)
        {
            await using var db = await Contexts.CreateDbContextAsync(cancellationToken);
            var latest = await db.AnalysisSnapshots.AsNoTracking().Where(s => s.StudyId == studyId).OrderByDescending(s => s.Version)
                .Select(s => new { s.ResultSetVersion, s.PayloadJson, s.ModelsJson }).FirstOrDefaultAsync(cancellationToken);
            if (latest is null) return (ModelChoices.None, 0);
            var snapshot = JsonSerializer.Deserialize<AnalysisSnapshotDto>(latest.PayloadJson, RunfoldJson.Options);
            return (ModelChoices.From(snapshot, StoredModels.FromJson(latest.ModelsJson)), latest.ResultSetVersion);
        }
    }

    private static partial class Log
    {
        [LoggerMessage(Level = LogLevel.Warning, Message = "Looking for studies whose analysis is behind failed")]
        public static partial void SweepFailed(ILogger logger, Exception exception);
    }
}
