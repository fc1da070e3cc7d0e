using Runfold.Shared.Studies;

namespace Runfold.Tests.Samples;

/// <summary>
/// Invented analysis snapshots for the tests and screenshots of the analysis pages, the report and share links:
/// demo data shaped like what the live analysis stores (models with fit checks, Sobol' rankings with intervals,
/// main effects, ranked candidates with verification runs), NOT a computed analysis. Deterministic for a seed.
/// </summary>
public static class SampleAnalysis
{
    public static readonly DateTimeOffset At = new(2026, 11, 30, 8, 15, 0, TimeSpan.Zero);

    /// <summary>The demo's plate-fin heat sink (DESIGN.md §7) as a study, with <paramref name="done"/> of 40 runs
    /// done (invented results) and one failed.</summary>
    public static (StudyDetail Study, IReadOnlyList<RunDto> Runs) HeatSink(int done = 26, int id = 1, StudyRole role = StudyRole.Lead)
    {
        IReadOnlyList<FactorSpec> factors =
        [
            new("fin_height", FactorKind.Continuous, 20, 60, Unit: "mm"),
            new("fin_thickness", FactorKind.Continuous, 0.8, 2.5, Unit: "mm"),
            new("fin_count", FactorKind.Integer, 10, 40),
            new("base_thickness", FactorKind.Continuous, 3, 10, Unit: "mm"),
            new("air_velocity", FactorKind.Continuous, 1, 6, Unit: "m/s"),
        ];
        IReadOnlyList<ResponseSpec> responses =
        [
            new("thermal_resistance", ResponseGoal.Minimize, Weight: 1, Unit: "K/W"),
            new("pressure_drop", ResponseGoal.Minimize, Upper: 60, Weight: 0.5, Unit: "Pa"),
            new("mass", ResponseGoal.Minimize, Weight: 0.5, Unit: "g"),
        ];
        var random = new Random(11);
        var runs = new List<RunDto>();
        for (var n = 1; n <= 40; n++)
        {
            var x = factors.ToDictionary(f => f.Name, f => FactorValue.Of(Natural(f, random.NextDouble())), StringComparer.Ordinal);
            var state = n <= done ? RunState.Done : n == done + 1 ? RunState.Failed : n <= done + 3 ? RunState.Claimed : RunState.Open;
            RunResultDto? result = null;
            if (state == RunState.Done)
            {
                double h = x["fin_height"].Number, t = x["fin_thickness"].Number, c = x["fin_count"].Number, b = x["base_thickness"].Number, v = x["air_velocity"].Number;
                result = new RunResultDto(new Dictionary<string, double>(StringComparer.Ordinal)
                {
                    ["thermal_resistance"] = 0.08 + 9 / (h * c * Math.Sqrt(v) * (0.6 + 0.2 * t)) + 0.002 * b,
                    ["pressure_drop"] = 1.6 * v * v * (1 + c * t / 60) * (0.6 + h / 100) * 3,
                    ["mass"] = 2.7 * (c * h * t * 0.1 + b * 10 * 1.2) * 1.1,
                }, 1, null);
            }
            runs.Add(new RunDto(100 + n, n, 1, state, x, state == RunState.Claimed ? "ana" : null, null, result));
        }
        var counts = new RunCounts(runs.Count(r => r.State == RunState.Open), runs.Count(r => r.State == RunState.Claimed), done, runs.Count(r => r.State == RunState.Failed));
        var study = new StudyDetail(id, "Plate-fin heat sink for the inverter module", "Demo study (invented data).", factors, responses,
            new DesignSpec(DesignMethod.LatinHypercube, Runs: 40), counts, [new StudyMemberDto(Guid.Empty, "lena", "Lena", StudyRole.Lead)], 24, At.AddDays(-6),
            null, role);
        return (study, runs);
    }

    /// <summary>A snapshot over the study's done runs. Responses with fewer than five done runs get a refusal.</summary>
    public static AnalysisSnapshotDto Snapshot(StudyDetail study, IReadOnlyList<RunDto> runs, int version = 1, DateTimeOffset? computedAt = null,
        int candidateCount = 12, int seed = 7)
    {
        ArgumentNullException.ThrowIfNull(study);
        ArgumentNullException.ThrowIfNull(runs);
        var done = runs.Where(r => r.State == RunState.Done && r.Result is not null).ToList();
        var random = new Random(seed + done.Count);
        var responses = new List<ResponseAnalysisDto>();
        var cvRmse = new Dictionary<string, double>(StringComparer.Ordinal);
        string[] kinds = ["gaussianProcess", "quadratic", "rbf"];
        for (var k = 0; k < study.Responses.Count; k++)
        {
            var response = study.Responses[k];
            var rows = done.Where(r => r.Result!.Values.ContainsKey(response.Name)).ToList();
            if (rows.Count < 5)
            {
                responses.Add(new ResponseAnalysisDto(response.Name, response.Unit, null, null, [], [],
                    $"A model needs at least 5 done runs with {response.Name}; {rows.Count} so far."));
                continue;
            }
            var observed = rows.Select(r => r.Result!.Values[response.Name]).ToList();
            var range = observed.Max() - observed.Min();
            var noise = new[] { 0.03, 0.06, 0.1 }[k % 3] * range * (12.0 / Math.Max(12, rows.Count)) * 1.5;
            var predicted = observed.Select(o => o + noise * Gaussian(random)).ToList();
            var residuals = observed.Zip(predicted, (o, p) => o - p).ToList();
            var rmse = Math.Sqrt(residuals.Average(e => e * e));
            var mean = observed.Average();
            var r2 = 1 - residuals.Sum(e => e * e) / Math.Max(1e-12, observed.Sum(o => (o - mean) * (o - mean)));
            cvRmse[response.Name] = rmse;
            var kind = kinds[k % kinds.Length];
            var compared = new List<ModelScoreDto> { new(kind, Describe(kind), rmse, r2) };
            compared.AddRange(kinds.Where(x => x != kind).Append("linear").Select((other, i) =>
                new ModelScoreDto(other, Describe(other), rmse * (1.15 + 0.35 * i), 1 - (1 - r2) * Math.Pow(1.15 + 0.35 * i, 2))));
            var model = new ModelSummaryDto(kind, Describe(kind), r2, rmse, rmse / Math.Max(1e-12, range), residuals.Max(Math.Abs),
                $"It has the lowest cross-validated RMSE of the {compared.Count} models compared; the next best, {compared[1].Kind}, is {(compared[1].CvRmse / rmse - 1) * 100:0} % worse.",
                response.Name == "pressure_drop", compared);
            var check = new FitCheckDto([.. rows.Select(r => r.Number)], observed, predicted, residuals, "leave-one-out");
            responses.Add(new ResponseAnalysisDto(response.Name, response.Unit, model, check, Sensitivity(study, random), MainEffects(study, observed, random)));
        }

        var candidates = new List<CandidateDto>();
        if (responses.All(r => r.Model is not null))
        {
            for (var rank = 1; rank <= candidateCount; rank++)
            {
                var factors = study.Factors.ToDictionary(f => f.Name, f => f.Kind == FactorKind.Categorical
                    ? FactorValue.OfLevel(f.Levels![0]) : FactorValue.Of(Natural(f, random.NextDouble())), StringComparer.Ordinal);
                var predicted = new Dictionary<string, PredictedValueDto>(StringComparer.Ordinal);
                foreach (var r in study.Responses)
                {
                    var values = done.Select(d => d.Result!.Values[r.Name]).ToList();
                    var (lo, hi) = (values.Min(), values.Max());
                    var position = r.Name == "thermal_resistance" ? 0.05 + 0.3 * rank / candidateCount : 0.1 + 0.6 * random.NextDouble();
                    predicted[r.Name] = new PredictedValueDto(lo + position * (hi - lo), cvRmse[r.Name] * (0.6 + 0.8 * random.NextDouble()));
                }
                var limits = study.Responses.Where(r => r.Upper is not null || r.Lower is not null)
                    .ToDictionary(r => r.Name, r => Math.Clamp(0.995 - 0.035 * (rank - 1) - 0.05 * random.NextDouble(), 0.5, 0.999), StringComparer.Ordinal);
                CandidateVerificationDto? verification = rank switch
                {
                    1 => new CandidateVerificationDto(41, RunState.Done, [.. study.Responses.Select(r => Verified(r.Name, predicted[r.Name].Mean, cvRmse[r.Name], 0.5))]),
                    2 => new CandidateVerificationDto(42, RunState.Claimed, null),
                    3 => new CandidateVerificationDto(43, RunState.Done, [.. study.Responses.Select((r, i) => Verified(r.Name, predicted[r.Name].Mean, cvRmse[r.Name], i == 0 ? 2.6 : 0.4))]),
                    _ => null,
                };
                candidates.Add(new CandidateDto(rank, factors, predicted, Math.Round(0.93 - 0.035 * (rank - 1) - 0.01 * random.NextDouble(), 3),
                    rank <= candidateCount / 3 ? 1 : rank <= 2 * candidateCount / 3 ? 2 : 3, rank == 4, rank == 4 ? 0.62 : 0.08 + 0.1 * random.NextDouble(),
                    limits, verification));
            }
        }
        var needed = responses.Any(r => r.Model is null) ? Math.Max(1, 5 - done.Count) : (int?)null;
        return new AnalysisSnapshotDto(version, version * 10L, done.Count, runs.Count, runs.Count(r => r.State == RunState.Failed),
            computedAt ?? At, responses, candidates, needed is null ? null : $"The first models need {needed} more done runs.", needed);
    }

    /// <summary>A series of snapshots as runs came in: the first after <paramref name="first"/> done runs, then every
    /// <paramref name="step"/> runs, the last over all done runs.</summary>
    public static IReadOnlyList<AnalysisSnapshotDto> History(StudyDetail study, IReadOnlyList<RunDto> runs, int first = 12, int step = 4)
    {
        ArgumentNullException.ThrowIfNull(runs);
        var done = runs.Where(r => r.State == RunState.Done).OrderBy(r => r.Number).ToList();
        var sizes = new List<int>();
        for (var n = first; n < done.Count; n += step) sizes.Add(n);
        sizes.Add(done.Count);
        return [.. sizes.Select((n, i) =>
        {
            var seen = done.Take(n).Select(r => r.Id).ToHashSet();
            var subset = runs.Select(r => r.State == RunState.Done && !seen.Contains(r.Id) ? r with { State = RunState.Open, Result = null } : r).ToList();
            return Snapshot(study, subset, i + 1, At.AddHours(-3 * (sizes.Count - 1 - i)));
        })];
    }

    private static IReadOnlyList<FactorSensitivityDto> Sensitivity(StudyDetail study, Random random)
    {
        var weights = study.Factors.Select((_, i) => Math.Pow(random.NextDouble(), 2) + (i == study.Factors.Count - 1 ? 0.9 : 0.02)).ToList();
        var sum = weights.Sum();
        return [.. study.Factors.Select((f, i) =>
        {
            var total = 0.97 * weights[i] / sum;
            var first = total * (0.7 + 0.25 * random.NextDouble());
            var width = 0.02 + 0.04 * random.NextDouble();
            var direction = total < 0.03 ? EffectDirectionDto.None : random.NextDouble() < 0.15 ? EffectDirectionDto.Mixed
                : random.NextDouble() < 0.5 ? EffectDirectionDto.Raises : EffectDirectionDto.Lowers;
            return new FactorSensitivityDto(f.Name, first, total, Math.Max(0, total - width), total + width, Math.Max(0, first - width), first + width, direction);
        })];
    }

    private static IReadOnlyList<MainEffectDto> MainEffects(StudyDetail study, IReadOnlyList<double> observed, Random random)
    {
        var (lo, hi) = (observed.Min(), observed.Max());
        var centre = (lo + hi) / 2;
        return [.. study.Factors.Select(f =>
        {
            var slope = (random.NextDouble() - 0.5) * (hi - lo) * 0.8;
            var curve = (random.NextDouble() - 0.5) * (hi - lo) * 0.3;
            var grid = Enumerable.Range(0, 21).Select(i => i / 20.0).ToList();
            return new MainEffectDto(f.Name, [.. grid.Select(t => Natural(f, t))], [.. grid.Select(t => centre + slope * (t - 0.5) + curve * (t - 0.5) * (t - 0.5))],
                [.. grid.Select(_ => 0.12 * (hi - lo))]);
        })];
    }

    private static VerificationValueDto Verified(string response, double predicted, double cvRmse, double errorInRmse)
    {
        var error = errorInRmse * cvRmse;
        // Within the cross-validated error as the server judges it: twice the RMSE (Verification.Compare).
        return new VerificationValueDto(response, predicted, predicted + error, error, cvRmse, Math.Abs(error) <= 2 * cvRmse);
    }

    private static string Describe(string kind) => kind switch
    {
        "gaussianProcess" => "Matérn 5/2 kernel, constant trend",
        "quadratic" => "stepwise terms by AICc",
        "rbf" => "cubic radial basis",
        _ => "main effects only",
    };

    private static double Natural(FactorSpec f, double t)
    {
        var value = (f.Low ?? 0) + t * ((f.High ?? 1) - (f.Low ?? 0));
        return f.Kind == FactorKind.Integer ? Math.Round(value) : Math.Round(value, 3);
    }

    private static double Gaussian(Random random) =>
        Math.Sqrt(-2 * Math.Log(1 - random.NextDouble())) * Math.Cos(2 * Math.PI * random.NextDouble());
}
