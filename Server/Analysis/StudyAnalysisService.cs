using System.Globalization;
using System.Text.Json;
using MathNet.Numerics.LinearAlgebra;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Server.Hosting;
using Runfold.Server.Runs;
using Runfold.Server.Studies;
using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Server.Analysis;

/// <summary>
/// The analysis as the API and the pages read and use it: the latest snapshot, its history, predictions from its
/// models, and new waves of runs. Viewers read and predict; only the lead adds waves.
/// </summary>
public sealed class StudyAnalysisService(
    RunfoldDbContext db,
    FittedModelCache models,
    FactorSpaces spaces,
    RunQueries queries,
    IStudyChangeNotifier changes,
    AnalysisOptions options,
    RunfoldSettings settings,
    TimeProvider time)
{
    /// <summary>The latest snapshot; an Ok outcome with null when none is computed yet.</summary>
    public async Task<Outcome<AnalysisSnapshotDto?>> GetLatestAsync(Caller caller, int studyId, CancellationToken cancellationToken)
    {
        var (_, failure) = await db.RequireAsync<AnalysisSnapshotDto?>(caller, studyId, StudyRole.Viewer, "read the analysis", cancellationToken);
        if (failure is not null) return failure;
        var payload = await db.AnalysisSnapshots.AsNoTracking().Where(s => s.StudyId == studyId).OrderByDescending(s => s.Version)
            .Select(s => s.PayloadJson).FirstOrDefaultAsync(cancellationToken);
        return Outcome<AnalysisSnapshotDto?>.Ok(payload is null ? null : JsonSerializer.Deserialize<AnalysisSnapshotDto>(payload, RunfoldJson.Options));
    }

    /// <summary>Every snapshot's point of the convergence view, oldest first.</summary>
    public async Task<Outcome<IReadOnlyList<AnalysisHistoryPointDto>>> GetHistoryAsync(Caller caller, int studyId, CancellationToken cancellationToken)
    {
        var (_, failure) = await db.RequireAsync<IReadOnlyList<AnalysisHistoryPointDto>>(caller, studyId, StudyRole.Viewer, "read the analysis", cancellationToken);
        if (failure is not null) return failure;
        var points = await db.AnalysisSnapshots.AsNoTracking().Where(s => s.StudyId == studyId && s.SummaryJson != null).OrderBy(s => s.Version)
            .Select(s => s.SummaryJson!).ToListAsync(cancellationToken);
        return Outcome<IReadOnlyList<AnalysisHistoryPointDto>>.Ok([.. points.Select(p => JsonSerializer.Deserialize<AnalysisHistoryPointDto>(p, RunfoldJson.Options)!)]);
    }

    /// <summary>Mean and standard deviation of every response that has a model, per point (natural units in), from
    /// the latest snapshot's models.</summary>
    public async Task<Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>> PredictAsync(Caller caller, int studyId,
        PredictRequest? request, CancellationToken cancellationToken)
    {
        var (_, failure) = await db.RequireAsync<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>(
            caller, studyId, StudyRole.Viewer, "use the analysis", cancellationToken);
        if (failure is not null) return failure;
        var space = await spaces.GetAsync(db, studyId, cancellationToken);
        var points = PredictionPoints.Check(space, request, options.MaxPredictPoints);
        if (!points.IsValid) return Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>.Invalid(points.Errors);

        var version = await db.AnalysisSnapshots.Where(s => s.StudyId == studyId).OrderByDescending(s => s.Version)
            .Select(s => (int?)s.Version).FirstOrDefaultAsync(cancellationToken);
        if (version is null)
            return Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>.Unprocessable(ValidationErrors.Single("study",
                $"Study {studyId} has no analysis yet: the first snapshot is computed as soon as a result is stored."));
        var fitted = await models.GetAsync(studyId, version.Value, cancellationToken);
        if (fitted is null || fitted.Models.Count == 0)
            return Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>.Unprocessable(ValidationErrors.Single("study",
                $"The latest analysis of study {studyId} (snapshot {version}) has no surrogate of any response yet; its notice says how many more done runs are needed."));

        var coded = points.Value!;
        var predictions = fitted.Models.ToDictionary(m => m.Key, m => m.Value.Predict(coded));
        var answer = new List<IReadOnlyDictionary<string, PredictedValueDto>>(coded.RowCount);
        for (var i = 0; i < coded.RowCount; i++)
            answer.Add(predictions.ToDictionary(p => p.Key, p => new PredictedValueDto(p.Value.Mean[i], p.Value.StandardDeviation?[i]), StringComparer.Ordinal));
        return Outcome<IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>>>.Ok(answer);
    }

    /// <summary>Adds a wave of runs (lead only). "augment" places space-filling runs by greedy maximin distance to
    /// every run of the study; "infill" and "verify" need the optimisation stage of the analysis.</summary>
    public async Task<Outcome<IReadOnlyList<RunDto>>> AddWaveAsync(Caller caller, int studyId, WaveRequest? request, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var (_, failure) = await db.RequireAsync<IReadOnlyList<RunDto>>(caller, studyId, StudyRole.Lead, "add waves of runs", cancellationToken);
        if (failure is not null) return failure;
        var kind = request?.Kind?.Trim();
        switch (kind?.ToLowerInvariant())
        {
            case null or "":
                return Invalid("kind", "Say which wave to add, e.g. {\"kind\": \"augment\", \"count\": 6}; the kinds are augment, infill and verify.");
            case "infill" or "verify":
                return Outcome<IReadOnlyList<RunDto>>.Unprocessable(ValidationErrors.Single("kind",
                    $"{(kind!.Equals("infill", StringComparison.OrdinalIgnoreCase) ? "Infill" : "Verification")} waves are chosen from the analysis' candidates and expected improvement, which needs the optimisation stage of the analysis; this server does not compute it yet. Add a space-filling wave with kind \"augment\"."));
            case "augment":
                break;
            default:
                return Invalid("kind", $"'{kind}' is not a kind of wave; the kinds are augment, infill and verify.");
        }
        if (request!.Criterion is { } criterion && !criterion.Equals("maximin", StringComparison.OrdinalIgnoreCase))
            return Invalid("criterion", "An augment wave places its runs by maximin distance; leave criterion out or set it to \"maximin\".");
        if (request.CandidateRank is not null)
            return Invalid("candidateRank", "candidateRank belongs to verify waves; an augment wave does not use it.");

        var space = await spaces.GetAsync(db, studyId, cancellationToken);
        var count = request.Count ?? Math.Max(4, space.Count);
        if (count < 1) return Invalid("count", "Ask for at least one run.");
        if (count > options.MaxWaveRuns) return Invalid("count", $"A wave adds at most {options.MaxWaveRuns:N0} runs; ask for fewer.");
        var existing = await db.Runs.AsNoTracking().Where(r => r.StudyId == studyId).OrderBy(r => r.Number)
            .Select(r => new { r.Number, r.FactorValues }).ToListAsync(cancellationToken);
        if (existing.Count + count > settings.MaxRuns)
            return Outcome<IReadOnlyList<RunDto>>.Unprocessable(ValidationErrors.Single("count",
                $"The study has {existing.Count:N0} runs; {count:N0} more would pass the server's limit of {settings.MaxRuns:N0} (RUNFOLD_MAX_RUNS)."));

        var study = await db.Studies.AsNoTracking().Where(s => s.Id == studyId).Select(s => new { s.DesignJson }).FirstAsync(cancellationToken);
        var design = JsonSerializer.Deserialize<DesignSpec>(study.DesignJson, RunfoldJson.Options);
        var constraints = DesignConstraints.Parse(design?.Constraints, space);
        var waveNumber = await db.Waves.Where(w => w.StudyId == studyId).MaxAsync(w => (int?)w.Number, cancellationToken) + 1 ?? 1;
        var coded = Matrix<double>.Build.Dense(existing.Count, space.Count, (i, j) => space[j].ToCoded(existing[i].FactorValues[j]));
        // Seeded by the wave number: the same request on the same study places the same runs.
        var added = DesignAugmentation.Augment(new DesignMatrix(space, coded), count, constraints.Value ?? DesignConstraints.None, new AugmentOptions(Seed: waveNumber));
        if (!added.IsOk) return added.As<IReadOnlyList<RunDto>>();

        var now = time.GetUtcNow();
        var firstNumber = (existing.Count == 0 ? 0 : existing[^1].Number) + 1;
        var wave = new Wave
        {
            StudyId = studyId,
            Number = waveNumber,
            Kind = WaveKind.Augment,
            RequestJson = JsonSerializer.Serialize(request with { Kind = "augment", Count = count }, RunfoldJson.Options),
            CreatedAt = now,
            CreatedById = caller.UserId,
        };
        long version;
        var ids = new List<int>();
        try
        {
            await using var transaction = await db.Database.BeginTransactionAsync(cancellationToken);
            db.Waves.Add(wave);
            await db.SaveChangesAsync(cancellationToken);
            var runs = added.Value!.NaturalRows().Select((row, i) => new Run
            {
                StudyId = studyId, WaveId = wave.Id, Number = firstNumber + i, State = RunState.Open, FactorValues = row, UpdatedAt = now,
            }).ToList();
            db.Runs.AddRange(runs);
            db.AuditEvents.Add(Audit.Event(caller, studyId, null, "wave.added", string.Create(CultureInfo.InvariantCulture,
                $"{caller.UserName} added wave {waveNumber}: {count} space-filling run{(count == 1 ? "" : "s")} (maximin augmentation of the {existing.Count} runs so far), run{(count == 1 ? $" {firstNumber}" : $"s {firstNumber}–{firstNumber + count - 1}")}"), now));
            await db.SaveChangesAsync(cancellationToken);
            version = await db.BumpResultSetAsync(studyId, now, cancellationToken);
            await transaction.CommitAsync(cancellationToken);
            ids.AddRange(runs.Select(r => r.Id));
        }
        catch (DbUpdateException)
        {
            return Outcome<IReadOnlyList<RunDto>>.Conflict("Another wave was added to this study at the same moment; nothing was stored. Look at the runs and ask again.");
        }
        db.ChangeTracker.Clear();
        changes.Publish(new StudyChange(studyId, StudyChangeKind.Runs, version));
        return Outcome<IReadOnlyList<RunDto>>.Ok(await queries.ListByIdsAsync(studyId, ids, cancellationToken));
    }

    private static Outcome<IReadOnlyList<RunDto>> Invalid(string field, string message) =>
        Outcome<IReadOnlyList<RunDto>>.Invalid(ValidationErrors.Single(field, message));
}

/// <summary>Points of a prediction request in natural units → coded rows, each value checked against its factor.</summary>
public static class PredictionPoints
{
    public static Validated<Matrix<double>> Check(FactorSpace space, PredictRequest? request, int maxPoints)
    {
        ArgumentNullException.ThrowIfNull(space);
        var errors = new ValidationErrors();
        var example = string.Join(", ", space.Factors.Take(2).Select(f => $"\"{f.Name}\": {(f.IsCategorical ? $"\"{f.Levels[0]}\"" : Number(f.Low))}"));
        if (request?.Points is not { Count: > 0 } points)
            return Validated<Matrix<double>>.Fail("points", $"Send the points to predict: {{\"points\": [{{{example}}}]}}.");
        if (points.Count > maxPoints)
            return Validated<Matrix<double>>.Fail("points", $"A request predicts at most {maxPoints:N0} points; this one has {points.Count:N0}.");
        var coded = Matrix<double>.Build.Dense(points.Count, space.Count);
        for (var i = 0; i < points.Count; i++)
        {
            var at = $"points[{i}]";
            if (points[i] is not { } point)
            {
                errors.Add(at, "This point is empty.");
                continue;
            }
            foreach (var name in point.Keys.Where(k => space.IndexOf(k) < 0))
                errors.Add($"{at}.{name}", $"'{name}' is not a factor of this study; the factors are {string.Join(", ", space.Factors.Select(f => f.Name))}.");
            foreach (var factor in space.Factors)
            {
                var field = $"{at}.{factor.Name}";
                var given = point.FirstOrDefault(p => string.Equals(p.Key, factor.Name, StringComparison.OrdinalIgnoreCase));
                if (given.Key is null)
                {
                    errors.Add(field, $"{factor.Name} is missing; every point needs a value of every factor.");
                    continue;
                }
                if (!factor.TryFromValue(given.Value, out var natural, out var error))
                {
                    errors.Add(field, error!);
                    continue;
                }
                if (!factor.IsCategorical && (natural < factor.Low || natural > factor.High))
                {
                    errors.Add(field, $"{Number(natural)} is outside the range of {factor.Name}, {Number(factor.Low)} – {Number(factor.High)}{(factor.Unit is null ? "" : " " + factor.Unit)}: the surrogates only describe the design space.");
                    continue;
                }
                if (factor.Kind == FactorKind.Integer && natural != Math.Round(natural))
                {
                    errors.Add(field, $"{factor.Name} takes whole numbers; {Number(natural)} is not one.");
                    continue;
                }
                coded[i, factor.Position] = factor.ToCoded(natural);
            }
        }
        return errors.IsEmpty ? Validated<Matrix<double>>.Ok(coded) : Validated<Matrix<double>>.Fail(errors);
    }

    private static string Number(double value) => value.ToString("G6", CultureInfo.InvariantCulture);
}
