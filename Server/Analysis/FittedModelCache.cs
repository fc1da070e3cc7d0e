using System.Collections.Concurrent;
using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Server.Runs;
using Runfold.Shared.Modeling.Selection;
using Runfold.Shared.Studies;

namespace Runfold.Server.Analysis;

/// <summary>The fitted models of one snapshot, ready to predict.</summary>
public sealed record SnapshotModels(int StudyId, int Version, FactorSpace Space, IReadOnlyDictionary<string, FittedSurrogate> Models);

/// <summary>
/// The latest snapshot's fitted models of each study, in memory, so a prediction costs only the prediction. The
/// instance that computes a snapshot puts its models here; any other instance (or this one after a restart)
/// rebuilds them on first use from the snapshot's stored recipes and the exact result revisions they were fitted
/// to (<see cref="RefitMode.Rebuild"/>: milliseconds per response, no search). A study's models nobody used for
/// <see cref="Unused"/> are dropped (a Gaussian process of a few hundred runs holds megabytes) and rebuilt when
/// next asked for.
/// </summary>
public sealed class FittedModelCache(IDbContextFactory<RunfoldDbContext> contexts, FactorSpaces spaces, TimeProvider time)
{
    public static readonly TimeSpan Unused = TimeSpan.FromMinutes(30);

    private readonly ConcurrentDictionary<int, Entry> _latest = new();
    private readonly ConcurrentDictionary<(int StudyId, int Version), Lazy<Task<SnapshotModels?>>> _building = new();

    public void Put(SnapshotModels models)
    {
        ArgumentNullException.ThrowIfNull(models);
        var now = time.GetUtcNow();
        _latest.AddOrUpdate(models.StudyId, new Entry(models, now), (_, old) => models.Version >= old.Models.Version ? new Entry(models, now) : old);
        foreach (var (studyId, entry) in _latest)
            if (now - entry.LastUsed > Unused) _latest.TryRemove(KeyValuePair.Create(studyId, entry));
    }

    /// <summary>The models of the given snapshot version; null when that snapshot has no stored models.</summary>
    public async Task<SnapshotModels?> GetAsync(int studyId, int version, CancellationToken cancellationToken)
    {
        if (_latest.TryGetValue(studyId, out var cached) && cached.Models.Version == version)
        {
            cached.LastUsed = time.GetUtcNow();
            return cached.Models;
        }
        var building = _building.GetOrAdd((studyId, version), key => new Lazy<Task<SnapshotModels?>>(() => RebuildAsync(key.StudyId, key.Version)));
        try
        {
            var models = await building.Value.WaitAsync(cancellationToken);
            if (models is not null) Put(models);
            return models;
        }
        finally
        {
            if (building.IsValueCreated && building.Value.IsCompleted) _building.TryRemove(KeyValuePair.Create((studyId, version), building));
        }
    }

    private sealed class Entry(SnapshotModels models, DateTimeOffset lastUsed)
    {
        public SnapshotModels Models { get; } = models;

        public DateTimeOffset LastUsed { get; set; } = lastUsed;
    }

    /// <summary>Rebuilds without the caller's cancellation: several requests may wait for the same rebuild.</summary>
    private async Task<SnapshotModels?> RebuildAsync(int studyId, int version)
    {
        await using var db = await contexts.CreateDbContextAsync();
        var row = await db.AnalysisSnapshots.AsNoTracking().Where(s => s.StudyId == studyId && s.Version == version)
            .Select(s => new { s.ModelsJson, s.PayloadJson }).FirstOrDefaultAsync();
        if (StoredModels.FromJson(row?.ModelsJson) is not { } stored) return null;
        var space = await spaces.GetAsync(db, studyId, CancellationToken.None);
        var runs = await AnalysisReads.ReadRevisionsAsync(db, space, studyId, stored.Runs, CancellationToken.None);
        var snapshot = JsonSerializer.Deserialize<AnalysisSnapshotDto>(row!.PayloadJson, RunfoldJson.Options)!;
        var input = new AnalysisInput(studyId, snapshot.ResultSetVersion, space, [], runs, snapshot.TotalRuns, snapshot.FailedRuns, null);
        var models = new Dictionary<string, FittedSurrogate>(StringComparer.Ordinal);
        foreach (var (response, model) in stored.Responses)
        {
            var data = input.DataOf(response);
            if (data.Coded is null) continue;
            var rebuilt = SurrogateRefit.Refit(space, data.Coded, data.Observed, model.Recipe, RefitMode.Rebuild, model.ChoiceReason);
            if (rebuilt.Surrogate is { } surrogate) models[response] = surrogate;
        }
        return new SnapshotModels(studyId, version, space, models);
    }
}
