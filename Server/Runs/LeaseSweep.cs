using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Server.Studies;
using Runfold.Server.Telemetry;
using Runfold.Shared.Studies;

namespace Runfold.Server.Runs;

/// <summary>
/// Returns runs whose lease lapsed to the open pool and records it. Each run is freed by a conditional update on
/// its version, so sweeps running at once on several server instances free each run once.
/// </summary>
public sealed class LeaseSweeper(IDbContextFactory<RunfoldDbContext> contexts, TimeProvider time, IStudyChangeNotifier changes)
{
    private const int Batch = 500;

    /// <summary>Frees every lapsed lease as of now; returns how many runs went back to open.</summary>
    public async Task<int> SweepAsync(CancellationToken cancellationToken)
    {
        var freed = 0;
        while (true)
        {
            await using var db = await contexts.CreateDbContextAsync(cancellationToken);
            var now = time.GetUtcNow();
            var lapsed = await db.Runs.AsNoTracking()
                .Where(r => r.State == RunState.Claimed && r.LeaseExpiresAt < now)
                .OrderBy(r => r.LeaseExpiresAt)
                .Take(Batch)
                .Select(r => new { r.Id, r.StudyId, r.Number, r.Version, r.LeaseExpiresAt, Holder = r.Assignee!.UserName })
                .ToListAsync(cancellationToken);
            if (lapsed.Count == 0) break;

            await using var transaction = await db.Database.BeginTransactionAsync(cancellationToken);
            var changedStudies = new HashSet<int>();
            foreach (var run in lapsed)
            {
                var updated = await db.Runs
                    .Where(r => r.Id == run.Id && r.Version == run.Version && r.State == RunState.Claimed && r.LeaseExpiresAt < now)
                    .ReturnToOpenAsync(now, cancellationToken);
                if (updated != 1) continue; // heartbeat, result or another sweep got there first
                db.AuditEvents.Add(Audit.Event(null, run.StudyId, run.Id, "lease.lapsed",
                    $"The lease of {run.Holder ?? "a former member"} on run {run.Number} lapsed at {run.LeaseExpiresAt:u}; the run is open again", now));
                changedStudies.Add(run.StudyId);
                freed++;
            }
            await db.SaveChangesAsync(cancellationToken);
            await transaction.CommitAsync(cancellationToken);
            foreach (var studyId in changedStudies)
                changes.Publish(new StudyChange(studyId, StudyChangeKind.Claims, await db.ResultSetVersionAsync(studyId, cancellationToken)));
            if (lapsed.Count < Batch) break;
        }
        RunfoldMetrics.LeasesLapsed(freed);
        return freed;
    }
}

/// <summary>Runs the lease sweep every <see cref="Interval"/> on the registered time provider.</summary>
public sealed partial class LeaseSweepService(LeaseSweeper sweeper, TimeProvider time, ILogger<LeaseSweepService> logger) : BackgroundService
{
    public static readonly TimeSpan Interval = TimeSpan.FromMinutes(1);

    protected override async Task ExecuteAsync(CancellationToken stoppingToken)
    {
        using var timer = new PeriodicTimer(Interval, time);
        try
        {
            while (await timer.WaitForNextTickAsync(stoppingToken))
            {
                try
                {
                    var freed = await sweeper.SweepAsync(stoppingToken);
                    if (freed > 0) Log.Freed(logger, freed);
                }
                catch (Exception e) when (e is DbUpdateException or InvalidOperationException or System.Data.Common.DbException)
                {
                    Log.Failed(logger, e); // the database is away for a moment; the next tick tries again
                }
            }
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
            // shutting down
        }
    }

    private static partial class Log
    {
        [LoggerMessage(Level = LogLevel.Information, Message = "{Count} lapsed leases returned to the open pool")]
        public static partial void Freed(ILogger logger, int count);

        [LoggerMessage(Level = LogLevel.Warning, Message = "The lease sweep failed; it runs again in a minute")]
        public static partial void Failed(ILogger logger, Exception exception);
    }
}
