using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Reports;

/// <summary>The stored analysis snapshots of a study (rows of <c>analysis_snapshots</c>, whose payload is the
/// <see cref="AnalysisSnapshotDto"/> as the API answers it), read for the report, share links and the pages.</summary>
public sealed class StoredSnapshots(RunfoldDbContext db)
{
    /// <summary>The newest snapshot of the study, or null before the first one.</summary>
    public async Task<AnalysisSnapshotDto?> LatestAsync(int studyId, CancellationToken cancellationToken)
    {
        var payload = await db.AnalysisSnapshots.AsNoTracking()
            .Where(s => s.StudyId == studyId)
            .OrderByDescending(s => s.Version)
            .Select(s => s.PayloadJson)
            .FirstOrDefaultAsync(cancellationToken);
        return payload is null ? null : Read(payload);
    }

    /// <summary>One point per stored snapshot, oldest first: the best candidate's desirability and each
    /// response's cross-validated NRMSE.</summary>
    public async Task<IReadOnlyList<AnalysisHistoryPointDto>> HistoryAsync(int studyId, CancellationToken cancellationToken)
    {
        var payloads = await db.AnalysisSnapshots.AsNoTracking()
            .Where(s => s.StudyId == studyId)
            .OrderBy(s => s.Version)
            .Select(s => s.PayloadJson)
            .ToListAsync(cancellationToken);
        return [.. payloads.Select(Read).Select(HistoryPoint)];
    }

    public async Task<Outcome<AnalysisSnapshotDto?>> LatestAsync(Caller caller, int studyId, CancellationToken cancellationToken)
    {
        var (_, denied) = await db.RequireAsync<AnalysisSnapshotDto?>(caller, studyId, StudyRole.Viewer, "see the analysis", cancellationToken);
        return denied ?? Outcome<AnalysisSnapshotDto?>.Ok(await LatestAsync(studyId, cancellationToken));
    }

    public async Task<Outcome<IReadOnlyList<AnalysisHistoryPointDto>>> HistoryAsync(Caller caller, int studyId, CancellationToken cancellationToken)
    {
        var (_, denied) = await db.RequireAsync<IReadOnlyList<AnalysisHistoryPointDto>>(caller, studyId, StudyRole.Viewer, "see the analysis", cancellationToken);
        return denied ?? Outcome<IReadOnlyList<AnalysisHistoryPointDto>>.Ok(await HistoryAsync(studyId, cancellationToken));
    }

    public static AnalysisHistoryPointDto HistoryPoint(AnalysisSnapshotDto snapshot)
    {
        ArgumentNullException.ThrowIfNull(snapshot);
        return new AnalysisHistoryPointDto(
            snapshot.Version,
            snapshot.BasedOnRuns,
            snapshot.ComputedAt,
            snapshot.Candidates.Count == 0 ? null : snapshot.Candidates.Max(c => c.Desirability),
            snapshot.Responses.Where(r => r.Model is not null).ToDictionary(r => r.Name, r => r.Model!.Nrmse, StringComparer.Ordinal));
    }

    private static AnalysisSnapshotDto Read(string payload) =>
        JsonSerializer.Deserialize<AnalysisSnapshotDto>(payload, RunfoldJson.Options)
        ?? throw new InvalidOperationException("A stored analysis snapshot is empty.");
}
