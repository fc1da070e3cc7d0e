using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Shared.Optimization;
using Runfold.Shared.Studies;

namespace Runfold.Server.Analysis;

/// <summary>What one verification run checks: the candidate it was added for, as the snapshot of that moment predicted
/// it (each response's mean and sd, and the cross-validated RMSE of its model then). The later observation is compared
/// with this prediction, not with the model refitted to the observation.</summary>
public sealed record VerificationTarget(
    int RunNumber,
    int CandidateRank,
    int SnapshotVersion,
    double Desirability,
    IReadOnlyDictionary<string, PredictedValueDto> Predicted,
    IReadOnlyDictionary<string, double> CvRmse);

/// <summary>The <c>RequestJson</c> of a verification wave: the request as understood, and the target of each run.</summary>
public sealed record VerificationWaveRecord(string Kind, int Count, int? CandidateRank, IReadOnlyList<VerificationTarget> Targets);

/// <summary>The <c>RequestJson</c> of an infill wave: the request as understood, the snapshot whose surrogates chose
/// the runs, and why each run was chosen.</summary>
public sealed record InfillWaveRecord(string Kind, int Count, string Criterion, string? Response, int SnapshotVersion,
    IReadOnlyList<InfillPick> Runs, IReadOnlyList<string> Notes);

/// <summary>One run of an infill wave: the criterion's value there and the sentence that explains the pick.</summary>
public sealed record InfillPick(int RunNumber, double Score, string Reason);

/// <summary>A verification run as the analysis reads it: its target, where it was run (coded), its state, and its
/// current result's values once done.</summary>
public sealed record VerificationRun(VerificationTarget Target, RunState State, double[] Coded, IReadOnlyDictionary<string, double>? Values)
{
    /// <summary>Predicted against observed for every response that the target predicted and the run observed; null
    /// until the run is done.</summary>
    public CandidateVerificationDto ToDto()
    {
        if (State != RunState.Done || Values is null) return new CandidateVerificationDto(Target.RunNumber, State, null);
        var values = new List<VerificationValueDto>();
        foreach (var (response, predicted) in Target.Predicted)
        {
            if (!Values.TryGetValue(response, out var observed) || !double.IsFinite(observed)) continue;
            if (!Target.CvRmse.TryGetValue(response, out var cvRmse) || !(cvRmse >= 0)) continue;
            var compared = Verification.Compare(predicted.Mean, observed, cvRmse);
            values.Add(new VerificationValueDto(response, compared.Predicted, compared.Observed, compared.Error, compared.CvRmse, compared.WithinCvError));
        }
        return new CandidateVerificationDto(Target.RunNumber, State, values);
    }
}

public static class VerificationReads
{
    /// <summary>Every verification run of the study in run order, with its current result when done.</summary>
    public static async Task<IReadOnlyList<VerificationRun>> ReadAsync(RunfoldDbContext db, FactorSpace space, int studyId, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(db);
        ArgumentNullException.ThrowIfNull(space);
        var waves = await db.Waves.AsNoTracking().Where(w => w.StudyId == studyId && w.Kind == WaveKind.Verification && w.RequestJson != null)
            .Select(w => new { w.Id, w.RequestJson }).ToListAsync(cancellationToken);
        if (waves.Count == 0) return [];
        var targets = new Dictionary<int, VerificationTarget>();
        foreach (var wave in waves)
            foreach (var target in JsonSerializer.Deserialize<VerificationWaveRecord>(wave.RequestJson!, RunfoldJson.Options)?.Targets ?? [])
                targets[target.RunNumber] = target;
        var waveIds = waves.Select(w => w.Id).ToList();
        var runs = await db.Runs.AsNoTracking().Where(r => r.StudyId == studyId && waveIds.Contains(r.WaveId)).OrderBy(r => r.Number)
            .Select(r => new { r.Id, r.Number, r.State, r.FactorValues, r.CurrentRevision }).ToListAsync(cancellationToken);
        var doneIds = runs.Where(r => r.State == RunState.Done).Select(r => r.Id).ToList();
        var values = doneIds.Count == 0 ? new Dictionary<int, Dictionary<string, double>>() : await db.ResultRevisions.AsNoTracking().Where(v => doneIds.Contains(v.RunId))
            .Join(db.Runs, v => new { v.RunId, v.Revision }, r => new { RunId = r.Id, Revision = r.CurrentRevision }, (v, r) => new { v.RunId, v.Values })
            .ToDictionaryAsync(v => v.RunId, v => v.Values, cancellationToken);
        return [.. runs.Where(r => targets.ContainsKey(r.Number)).Select(r => new VerificationRun(
            targets[r.Number], r.State, space.ToCoded(r.FactorValues), values.GetValueOrDefault(r.Id)))];
    }
}
