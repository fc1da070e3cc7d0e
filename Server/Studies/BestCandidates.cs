using System.Text.Json;
using Runfold.Shared.Studies;

namespace Runfold.Server.Studies;

/// <summary>The best candidate of a stored analysis snapshot, for the studies list.</summary>
public static class BestCandidates
{
    /// <summary>Candidates are ranked, so the first is the best. Null when the snapshot holds none, or when its
    /// payload cannot be read (an older format): the list then shows no candidate rather than failing.</summary>
    public static BestCandidateSummary? FromSnapshot(string payloadJson)
    {
        AnalysisSnapshotDto? snapshot;
        try
        {
            snapshot = JsonSerializer.Deserialize<AnalysisSnapshotDto>(payloadJson, RunfoldJson.Options);
        }
        catch (JsonException)
        {
            return null;
        }
        return snapshot is null ? null : From(snapshot);
    }

    public static BestCandidateSummary? From(AnalysisSnapshotDto snapshot)
    {
        ArgumentNullException.ThrowIfNull(snapshot);
        if (snapshot.Candidates is not { Count: > 0 } candidates) return null;
        var best = candidates.MinBy(c => c.Rank)!;
        var units = (snapshot.Responses ?? []).ToDictionary(r => r.Name, r => r.Unit, StringComparer.Ordinal);
        var order = (snapshot.Responses ?? []).Select((r, i) => (r.Name, i)).ToDictionary(p => p.Name, p => p.i, StringComparer.Ordinal);
        var predicted = best.Predicted
            .OrderBy(p => order.GetValueOrDefault(p.Key, int.MaxValue))
            .Select(p => new PredictedResponseSummary(p.Key, units.GetValueOrDefault(p.Key), p.Value.Mean, p.Value.Sd))
            .ToList();
        var verified = best.Verification is { State: RunState.Done, Responses: { Count: > 0 } checks } && checks.All(v => v.WithinCvError);
        return new BestCandidateSummary(snapshot.Version, snapshot.BasedOnRuns, snapshot.ComputedAt, best.Desirability,
            best.Extrapolating, verified, predicted);
    }
}
