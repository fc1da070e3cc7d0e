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
using Runfold.Shared.Modeling;
using Runfold.Shared.Optimization;
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

    /// <summary>
    /// Adds a wave of runs (lead only), in one transaction with its audit event. "augment" places space-filling runs
    /// by greedy maximin distance to every run of the study; "infill" proposes runs from the latest snapshot's
    /// surrogates (<see cref="NextWave"/>: expected improvement, largest predictive variance or maximin fill; the
    /// open and claimed runs count as if they had returned their predicted values, so the wave does not pile onto
    /// runs still being solved); "verify" adds a run at a candidate's setting and keeps the snapshot's prediction of
    /// it for the comparison with the observation.
    /// </summary>
    public async Task<Outcome<IReadOnlyList<RunDto>>> AddWaveAsync(Caller caller, int studyId, WaveRequest? request, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var (_, failure) = await db.RequireAsync<IReadOnlyList<RunDto>>(caller, studyId, StudyRole.Lead, "add waves of runs", cancellationToken);
        if (failure is not null) return failure;
        var kind = request?.Kind?.Trim().ToLowerInvariant();
        if (kind is null or "")
            return Invalid("kind", "Say which wave to add, e.g. {\"kind\": \"infill\", \"count\": 4}; the kinds are infill, augment and verify.");
        if (kind is not ("augment" or "infill" or "verify"))
            return Invalid("kind", $"'{request!.Kind}' is not a kind of wave; the kinds are infill, augment and verify.");
        if (kind != "verify" && request!.CandidateRank is not null)
            return Invalid("candidateRank", $"candidateRank belongs to verify waves; an {kind} wave does not use it.");
        if (kind != "infill" && request!.Response is not null)
            return Invalid("response", "response names the response an infill wave improves or learns; leave it out of other waves.");

        var space = await spaces.GetAsync(db, studyId, cancellationToken);
        var defaultCount = kind == "verify" ? 1 : Math.Max(4, space.Count);
        var count = request!.Count ?? defaultCount;
        if (count < 1) return Invalid("count", "Ask for at least one run.");
        var most = kind == "infill" ? Math.Min(options.MaxInfillRuns, options.MaxWaveRuns) : options.MaxWaveRuns;
        if (count > most)
            return Invalid("count", kind == "infill"
                ? $"An infill wave adds at most {most:N0} runs (each is chosen with the surrogates updated by the ones before it); ask for fewer, or add a space-filling wave with kind \"augment\"."
                : $"A wave adds at most {most:N0} runs; ask for fewer.");
        var existing = await db.Runs.AsNoTracking().Where(r => r.StudyId == studyId).OrderBy(r => r.Number)
            .Select(r => new { r.Id, r.Number, r.State, r.FactorValues, r.CurrentRevision }).ToListAsync(cancellationToken);
        if (existing.Count + count > settings.MaxRuns)
            return Outcome<IReadOnlyList<RunDto>>.Unprocessable(ValidationErrors.Single("count",
                $"The study has {existing.Count:N0} runs; {count:N0} more would pass the server's limit of {settings.MaxRuns:N0} (RUNFOLD_MAX_RUNS)."));
        var designJson = await db.Studies.AsNoTracking().Where(s => s.Id == studyId).Select(s => s.DesignJson).FirstAsync(cancellationToken);
        var constraints = StudyConstraints.Of(designJson, space);
        var waveNumber = await db.Waves.Where(w => w.StudyId == studyId).MaxAsync(w => (int?)w.Number, cancellationToken) + 1 ?? 1;
        var firstNumber = (existing.Count == 0 ? 0 : existing[^1].Number) + 1;
        var coded = Matrix<double>.Build.Dense(existing.Count, space.Count, (i, j) => space[j].ToCoded(existing[i].FactorValues[j]));

        switch (kind)
        {
            case "augment":
            {
                if (request.Criterion is { } criterion && !criterion.Equals("maximin", StringComparison.OrdinalIgnoreCase))
                    return Invalid("criterion", "An augment wave places its runs by maximin distance; leave criterion out or set it to \"maximin\".");
                // Seeded by the wave number: the same request on the same study places the same runs.
                var added = DesignAugmentation.Augment(new DesignMatrix(space, coded), count, constraints, new AugmentOptions(Seed: waveNumber));
                if (!added.IsOk) return added.As<IReadOnlyList<RunDto>>();
                return await StoreWaveAsync(caller, studyId, waveNumber, WaveKind.Augment,
                    JsonSerializer.Serialize(request with { Kind = "augment", Count = count }, RunfoldJson.Options), [.. added.Value!.NaturalRows()],
                    $"{count} space-filling run{Plural(count)} (maximin augmentation of the {existing.Count} runs so far), {RunRange(firstNumber, count)}", cancellationToken);
            }
            case "infill":
            {
                if (!TryCriterion(request.Criterion, out var criterion))
                    return Invalid("criterion", $"'{request.Criterion}' is not an infill criterion; the criteria are expectedImprovement (where a better design is likely), variance (where the surrogates are least sure) and maximin (as far as possible from every run).");
                var latest = await LatestModelsAsync(studyId, cancellationToken);
                if (latest.Failure is { } missing) return missing;
                var (snapshot, fitted) = (latest.Snapshot!, latest.Models!);
                var responses = await db.StudyResponses.AsNoTracking().Where(r => r.StudyId == studyId).OrderBy(r => r.Position).ToListAsync(cancellationToken);
                string? response = null;
                if (request.Response is { } named)
                {
                    var match = responses.FirstOrDefault(r => string.Equals(r.Name, named.Trim(), StringComparison.OrdinalIgnoreCase));
                    if (match is null)
                        return Invalid("response", $"'{named}' is not a response of this study; the responses are {string.Join(", ", responses.Select(r => r.Name))}.");
                    if (!fitted.Models.ContainsKey(match.Name))
                        return Outcome<IReadOnlyList<RunDto>>.Unprocessable(ValidationErrors.Single("response",
                            $"{match.Name} has no surrogate in analysis {snapshot.Version} yet, so no wave can be aimed at it; add a space-filling wave with kind \"augment\"."));
                    response = match.Name;
                }
                var runs = await InfillRunsAsync(existing.Select(r => (r.Id, r.State, r.CurrentRevision)).ToList(), coded, cancellationToken);
                var objectives = InfillObjectives(responses.Select(r => r.ToSpec()).ToList(), fitted, runs);
                var proposal = NextWave.Propose(space, objectives, runs.Coded, constraints,
                    new NextWaveOptions { Count = count, Criterion = criterion, Response = response, Seed = waveNumber }, cancellationToken);
                if (proposal.Runs.Count == 0)
                    return Outcome<IReadOnlyList<RunDto>>.Unprocessable(ValidationErrors.Single("kind",
                        proposal.Notes.Count > 0 ? string.Join(" ", proposal.Notes) : "No run could be placed in the design space."));
                var what = criterion switch
                {
                    InfillCriterion.ExpectedImprovement => $"by expected improvement of {(response ?? "the overall desirability")}",
                    InfillCriterion.Variance => $"where the surrogate{(response is null ? "s are" : $" of {response} is")} least sure",
                    _ => "by maximin distance",
                };
                var record = new InfillWaveRecord("infill", proposal.Runs.Count, CriterionName(criterion), response, snapshot.Version,
                    [.. proposal.Runs.Select((r, i) => new InfillPick(firstNumber + i, r.Score, r.Reason))], proposal.Notes);
                return await StoreWaveAsync(caller, studyId, waveNumber, WaveKind.Infill, JsonSerializer.Serialize(record, RunfoldJson.Options),
                    [.. proposal.Runs.Select(r => r.Natural.ToArray())],
                    $"{proposal.Runs.Count} infill run{Plural(proposal.Runs.Count)} chosen {what} on analysis {snapshot.Version}, {RunRange(firstNumber, proposal.Runs.Count)}", cancellationToken);
            }
            default:
            {
                if (request.Criterion is not null)
                    return Invalid("criterion", "A verify wave runs the candidates' own settings; leave criterion out.");
                if (request.CandidateRank is not null && count != 1)
                    return Invalid("count", "A verify wave with a candidateRank adds one run for that candidate; leave count out, or leave candidateRank out to verify the best unverified candidates.");
                var snapshot = await LatestSnapshotAsync(studyId, cancellationToken);
                if (snapshot is null || snapshot.Candidates.Count == 0)
                    return Outcome<IReadOnlyList<RunDto>>.Unprocessable(ValidationErrors.Single("candidateRank", snapshot is null
                        ? $"Study {studyId} has no analysis yet, so there is no candidate to verify."
                        : $"Analysis {snapshot.Version} has no candidates to verify{(snapshot.CandidateNotes is { Count: > 0 } notes ? ": " + notes[0] : ".")}"));
                List<CandidateDto> chosen;
                if (request.CandidateRank is { } rank)
                {
                    var candidate = snapshot.Candidates.FirstOrDefault(c => c.Rank == rank);
                    if (candidate is null)
                        return Invalid("candidateRank", $"Analysis {snapshot.Version} ranks candidates 1–{snapshot.Candidates.Max(c => c.Rank)}; there is no candidate {rank}.");
                    if (candidate.Verification is { } already)
                        return Outcome<IReadOnlyList<RunDto>>.Unprocessable(ValidationErrors.Single("candidateRank",
                            $"Candidate {rank} already has verification run {already.RunNumber} ({RunClaims.StateName(already.State)})."));
                    chosen = [candidate];
                }
                else
                {
                    chosen = [.. snapshot.Candidates.Where(c => c.Verification is null).OrderBy(c => c.Rank).Take(count)];
                    if (chosen.Count < count)
                        return Outcome<IReadOnlyList<RunDto>>.Unprocessable(ValidationErrors.Single("count",
                            $"Analysis {snapshot.Version} has {chosen.Count} unverified candidate{Plural(chosen.Count)}; ask for at most that many."));
                }
                var cvRmse = snapshot.Responses.Where(r => r.Model is not null).ToDictionary(r => r.Name, r => r.Model!.CvRmse, StringComparer.Ordinal);
                var rows = new List<double[]>(chosen.Count);
                foreach (var candidate in chosen)
                {
                    var row = new double[space.Count];
                    foreach (var factor in space.Factors)
                        if (!candidate.Factors.TryGetValue(factor.Name, out var value) || !factor.TryFromValue(value, out row[factor.Position], out _))
                            return Outcome<IReadOnlyList<RunDto>>.Conflict($"Candidate {candidate.Rank} of analysis {snapshot.Version} does not fit the study's factors any more; wait for the next analysis and verify again.");
                    rows.Add(row);
                }
                // The snapshot may not show a verification run added a moment ago: the stored runs decide.
                var verifications = await VerificationReads.ReadAsync(db, space, studyId, cancellationToken);
                for (var i = 0; i < rows.Count; i++)
                {
                    var at = space.ToCoded(rows[i]);
                    var same = verifications.FirstOrDefault(v => v.Coded.Zip(at).All(p => Math.Abs(p.First - p.Second) < 1e-9));
                    if (same is not null)
                        return Outcome<IReadOnlyList<RunDto>>.Unprocessable(ValidationErrors.Single("candidateRank",
                            $"Candidate {chosen[i].Rank} already has verification run {same.Target.RunNumber} ({RunClaims.StateName(same.State)})."));
                }
                var targets = chosen.Select((c, i) => new VerificationTarget(firstNumber + i, c.Rank, snapshot.Version, c.Desirability, c.Predicted, cvRmse)).ToList();
                var sentence = chosen.Count == 1
                    ? string.Create(CultureInfo.InvariantCulture, $"a verification run of candidate {chosen[0].Rank} of analysis {snapshot.Version} (predicted desirability {chosen[0].Desirability:0.###}), run {firstNumber}")
                    : $"{chosen.Count} verification runs of candidates {string.Join(", ", chosen.Select(c => c.Rank))} of analysis {snapshot.Version}, {RunRange(firstNumber, chosen.Count)}";
                return await StoreWaveAsync(caller, studyId, waveNumber, WaveKind.Verification,
                    JsonSerializer.Serialize(new VerificationWaveRecord("verify", chosen.Count, request.CandidateRank, targets), RunfoldJson.Options),
                    rows, sentence, cancellationToken);
            }
        }
    }

    /// <summary>The new wave, its runs, its audit event and the result-set bump in one transaction.</summary>
    private async Task<Outcome<IReadOnlyList<RunDto>>> StoreWaveAsync(Caller caller, int studyId, int waveNumber, WaveKind kind, string requestJson,
        IReadOnlyList<double[]> naturalRows, string what, CancellationToken cancellationToken)
    {
        var now = time.GetUtcNow();
        var firstNumber = await db.Runs.Where(r => r.StudyId == studyId).MaxAsync(r => (int?)r.Number, cancellationToken) + 1 ?? 1;
        var wave = new Wave { StudyId = studyId, Number = waveNumber, Kind = kind, RequestJson = requestJson, CreatedAt = now, CreatedById = caller.UserId };
        long version;
        var ids = new List<int>();
        try
        {
            await using var transaction = await db.Database.BeginTransactionAsync(cancellationToken);
            db.Waves.Add(wave);
            await db.SaveChangesAsync(cancellationToken);
            var runs = naturalRows.Select((row, i) => new Run
            {
                StudyId = studyId, WaveId = wave.Id, Number = firstNumber + i, State = RunState.Open, FactorValues = row, UpdatedAt = now,
            }).ToList();
            db.Runs.AddRange(runs);
            db.AuditEvents.Add(Audit.Event(caller, studyId, null, "wave.added", $"{caller.UserName} added wave {waveNumber}: {what}", now));
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

    private async Task<AnalysisSnapshotDto?> LatestSnapshotAsync(int studyId, CancellationToken cancellationToken)
    {
        var payload = await db.AnalysisSnapshots.AsNoTracking().Where(s => s.StudyId == studyId).OrderByDescending(s => s.Version)
            .Select(s => s.PayloadJson).FirstOrDefaultAsync(cancellationToken);
        return payload is null ? null : JsonSerializer.Deserialize<AnalysisSnapshotDto>(payload, RunfoldJson.Options);
    }

    private async Task<(AnalysisSnapshotDto? Snapshot, SnapshotModels? Models, Outcome<IReadOnlyList<RunDto>>? Failure)> LatestModelsAsync(int studyId,
        CancellationToken cancellationToken)
    {
        var snapshot = await LatestSnapshotAsync(studyId, cancellationToken);
        if (snapshot is null)
            return (null, null, Outcome<IReadOnlyList<RunDto>>.Unprocessable(ValidationErrors.Single("kind",
                $"Study {studyId} has no analysis yet, so an infill wave has no surrogate to follow; add a space-filling wave with kind \"augment\".")));
        var fitted = await models.GetAsync(studyId, snapshot.Version, cancellationToken);
        if (fitted is null || fitted.Models.Count == 0)
            return (snapshot, null, Outcome<IReadOnlyList<RunDto>>.Unprocessable(ValidationErrors.Single("kind",
                $"Analysis {snapshot.Version} has no surrogate of any response yet ({snapshot.Notice ?? "too few done runs"}); add a space-filling wave with kind \"augment\".")));
        return (snapshot, fitted, null);
    }

    /// <summary>The runs an infill wave reckons with: the done runs with their current values, then the open and
    /// claimed ones (failed runs carry no value and are left out).</summary>
    private async Task<InfillRuns> InfillRunsAsync(IReadOnlyList<(int Id, RunState State, int Revision)> runs, Matrix<double> coded,
        CancellationToken cancellationToken)
    {
        var doneIds = runs.Where(r => r.State == RunState.Done).Select(r => r.Id).ToList();
        var values = doneIds.Count == 0 ? new Dictionary<int, Dictionary<string, double>>() : await db.ResultRevisions.AsNoTracking()
            .Where(v => doneIds.Contains(v.RunId))
            .Join(db.Runs, v => new { v.RunId, v.Revision }, r => new { RunId = r.Id, Revision = r.CurrentRevision }, (v, r) => new { v.RunId, v.Values })
            .ToDictionaryAsync(v => v.RunId, v => v.Values, cancellationToken);
        var rows = new List<int>();
        var observed = new List<IReadOnlyDictionary<string, double>?>();
        foreach (var state in new[] { RunState.Done, RunState.Open, RunState.Claimed })
            for (var i = 0; i < runs.Count; i++)
            {
                if (runs[i].State != state) continue;
                rows.Add(i);
                observed.Add(state == RunState.Done ? values.GetValueOrDefault(runs[i].Id) : null);
            }
        var matrix = Matrix<double>.Build.Dense(rows.Count, coded.ColumnCount, (i, j) => coded[rows[i], j]);
        return new InfillRuns(matrix, observed);
    }

    /// <summary>Each response with a surrogate as an objective of the wave. Where a run has no value of the response
    /// yet (open, claimed, or done without it), the surrogate's prediction stands in for it, and the surrogate is
    /// conditioned on those predictions (kriging believer, Ginsbourger et al. 2010) so it is sure there already.</summary>
    private static List<ResponseObjective> InfillObjectives(IReadOnlyList<ResponseSpec> responses, SnapshotModels fitted, InfillRuns runs)
    {
        var objectives = new List<ResponseObjective>();
        for (var position = 0; position < responses.Count; position++)
        {
            var spec = responses[position];
            if (!fitted.Models.TryGetValue(spec.Name, out var surrogate)) continue;
            var predicted = runs.Coded.RowCount == 0 ? [] : surrogate.PredictMean(runs.Coded);
            var values = new double[runs.Coded.RowCount];
            var missing = new List<int>();
            for (var i = 0; i < values.Length; i++)
            {
                if (runs.Observed[i] is { } known && known.TryGetValue(spec.Name, out var v) && double.IsFinite(v)) values[i] = v;
                else
                {
                    values[i] = predicted[i];
                    missing.Add(i);
                }
            }
            IResponseSurrogate model = surrogate;
            if (missing.Count > 0)
            {
                var pending = Matrix<double>.Build.Dense(missing.Count, runs.Coded.ColumnCount, (i, j) => runs.Coded[missing[i], j]);
                model = surrogate.Condition(pending, [.. missing.Select(i => predicted[i])]) ?? surrogate;
            }
            objectives.Add(new ResponseObjective(CandidatesStage.ToResponse(spec, position), model, surrogate.Check.CvRmse, values));
        }
        return objectives;
    }

    private static bool TryCriterion(string? text, out InfillCriterion criterion)
    {
        criterion = InfillCriterion.ExpectedImprovement;
        switch (text?.Trim().ToLowerInvariant())
        {
            case null or "" or "expectedimprovement" or "expected-improvement" or "ei":
                return true;
            case "variance":
                criterion = InfillCriterion.Variance;
                return true;
            case "maximin":
                criterion = InfillCriterion.Maximin;
                return true;
            default:
                return false;
        }
    }

    private static string CriterionName(InfillCriterion criterion) => criterion switch
    {
        InfillCriterion.ExpectedImprovement => "expectedImprovement",
        InfillCriterion.Variance => "variance",
        _ => "maximin",
    };

    private static string Plural(int count) => count == 1 ? "" : "s";

    private static string RunRange(int first, int count) => count == 1 ? $"run {first}" : $"runs {first}–{first + count - 1}";

    private sealed record InfillRuns(Matrix<double> Coded, IReadOnlyList<IReadOnlyDictionary<string, double>?> Observed);

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
