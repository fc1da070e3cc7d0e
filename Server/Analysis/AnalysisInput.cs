using System.Data;
using System.Text.Json;
using MathNet.Numerics.LinearAlgebra;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Server.Runs;
using Runfold.Server.Studies;
using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Server.Analysis;

/// <summary>A done run as the analysis reads it: the revision of its current result, coded factors and values.</summary>
public sealed record DoneRun(int RunId, int Number, int Revision, double[] Coded, IReadOnlyDictionary<string, double> Values);

/// <summary>The runs of one response that have a value: coded rows (null when there are none), observations and
/// run numbers, in run order.</summary>
public sealed record ResponseData(Matrix<double>? Coded, double[] Observed, int[] RunNumbers)
{
    public int Count => Observed.Length;
}

/// <summary>What one refit reads: the study's done runs at one result-set version, with the counts the
/// snapshot reports (failed runs are counted, never fitted).</summary>
public sealed record AnalysisInput(
    int StudyId,
    long ResultSetVersion,
    FactorSpace Space,
    IReadOnlyList<ResponseSpec> Responses,
    IReadOnlyList<DoneRun> Runs,
    int TotalRuns,
    int FailedRuns,
    DateTimeOffset? NewestResultAt)
{
    /// <summary>The study's constraints between factors: candidates and new waves honour them.</summary>
    public DesignConstraints Constraints { get; init; } = DesignConstraints.None;

    /// <summary>The verification runs of the study: their designs stay among the candidates with the result.</summary>
    public IReadOnlyList<VerificationRun> Verifications { get; init; } = [];

    /// <summary>The done runs' coded factor values (runs × factors), in run order.</summary>
    public Matrix<double> CodedRuns() => Matrix<double>.Build.Dense(Runs.Count, Space.Count, (i, j) => Runs[i].Coded[j]);

    public ResponseData DataOf(string response)
    {
        var rows = Runs.Where(r => r.Values.TryGetValue(response, out var v) && double.IsFinite(v)).ToList();
        var coded = rows.Count == 0 ? null : Matrix<double>.Build.Dense(rows.Count, Space.Count, (i, j) => rows[i].Coded[j]);
        return new ResponseData(coded, [.. rows.Select(r => r.Values[response])], [.. rows.Select(r => r.Number)]);
    }
}

/// <summary>Reading what the analysis works on.</summary>
public static class AnalysisReads
{
    /// <summary>The study's done runs with their current results and the result-set version they belong to, read in
    /// one snapshot of the database on PostgreSQL. Null when the study does not exist.</summary>
    public static async Task<AnalysisInput?> ReadAsync(RunfoldDbContext db, FactorSpaces spaces, int studyId, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(db);
        ArgumentNullException.ThrowIfNull(spaces);
        await using var transaction = db.Provider == StorageProvider.Postgres
            ? await db.Database.BeginTransactionAsync(IsolationLevel.RepeatableRead, cancellationToken)
            : null;
        // Without a database snapshot (SQLite) the version is read first: runs read after it may be newer, never
        // older, so a snapshot never claims a version whose results it lacks.
        var version = await db.Studies.Where(s => s.Id == studyId).Select(s => (long?)s.ResultSetVersion).FirstOrDefaultAsync(cancellationToken);
        if (version is null) return null;
        var space = await spaces.GetAsync(db, studyId, cancellationToken);
        var responses = (await db.StudyResponses.AsNoTracking().Where(r => r.StudyId == studyId).OrderBy(r => r.Position).ToListAsync(cancellationToken))
            .Select(r => r.ToSpec()).ToList();
        var counts = await db.Runs.Where(r => r.StudyId == studyId).GroupBy(r => r.State)
            .Select(g => new { State = g.Key, Count = g.Count() }).ToListAsync(cancellationToken);
        var done = await db.Runs.AsNoTracking().Where(r => r.StudyId == studyId && r.State == RunState.Done)
            .Join(db.ResultRevisions,
                r => new { RunId = r.Id, Revision = r.CurrentRevision },
                v => new { v.RunId, v.Revision },
                (r, v) => new { r.Id, r.Number, r.FactorValues, v.Revision, v.Values, v.CreatedAt })
            .OrderBy(r => r.Number)
            .ToListAsync(cancellationToken);
        var verifications = await VerificationReads.ReadAsync(db, space, studyId, cancellationToken);
        var designJson = await db.Studies.Where(s => s.Id == studyId).Select(s => s.DesignJson).FirstAsync(cancellationToken);
        if (transaction is not null) await transaction.CommitAsync(cancellationToken);
        return new AnalysisInput(
            studyId,
            version.Value,
            space,
            responses,
            [.. done.Select(r => new DoneRun(r.Id, r.Number, r.Revision, space.ToCoded(r.FactorValues), r.Values))],
            counts.Sum(c => c.Count),
            counts.Where(c => c.State == RunState.Failed).Sum(c => c.Count),
            done.Count == 0 ? null : done.Max(r => r.CreatedAt))
        {
            Constraints = StudyConstraints.Of(designJson, space),
            Verifications = verifications,
        };
    }

    /// <summary>Exactly the given result revisions (run id, revision), in the given order: what a snapshot's models
    /// were fitted to. Revisions are append-only, so these are the same values whenever they are read.</summary>
    public static async Task<IReadOnlyList<DoneRun>> ReadRevisionsAsync(RunfoldDbContext db, FactorSpace space, int studyId,
        IReadOnlyList<RunRevision> revisions, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(db);
        ArgumentNullException.ThrowIfNull(space);
        ArgumentNullException.ThrowIfNull(revisions);
        var ids = revisions.Select(r => r.RunId).Distinct().ToList();
        var rows = await db.Runs.AsNoTracking().Where(r => r.StudyId == studyId && ids.Contains(r.Id))
            .Join(db.ResultRevisions, r => r.Id, v => v.RunId, (r, v) => new { r.Id, r.Number, r.FactorValues, v.Revision, v.Values })
            .ToListAsync(cancellationToken);
        var byKey = rows.ToDictionary(r => (r.Id, r.Revision));
        var runs = new List<DoneRun>(revisions.Count);
        foreach (var wanted in revisions)
        {
            if (!byKey.TryGetValue((wanted.RunId, wanted.Revision), out var row))
                throw new InvalidOperationException($"Revision {wanted.Revision} of run id {wanted.RunId} is no longer stored.");
            runs.Add(new DoneRun(row.Id, row.Number, row.Revision, space.ToCoded(row.FactorValues), row.Values));
        }
        return runs;
    }
}

/// <summary>One result revision of one run.</summary>
public readonly record struct RunRevision(int RunId, int Revision);

/// <summary>The constraints between factors stored with a study's design.</summary>
public static class StudyConstraints
{
    /// <summary>The constraints of the stored design; none when it has none (they were checked when the study was
    /// created, so a stored design parses).</summary>
    public static DesignConstraints Of(string designJson, FactorSpace space)
    {
        ArgumentNullException.ThrowIfNull(space);
        var design = JsonSerializer.Deserialize<DesignSpec>(designJson, RunfoldJson.Options);
        return DesignConstraints.Parse(design?.Constraints, space).Value ?? DesignConstraints.None;
    }
}
