using Runfold.Shared.Optimization;
using Runfold.Shared.Studies;

namespace Runfold.Server.Analysis;

/// <summary>
/// The "candidates" stage of a snapshot: ranked candidate designs on the responses' surrogates
/// (<see cref="CandidateSearch"/> within <see cref="AnalysisOptions.CandidateBudget"/>), honouring the study's
/// constraints; the designs of the verification runs stay in the list with their predicted-against-observed check.
/// </summary>
public sealed class CandidatesStage(AnalysisOptions options) : IAnalysisStage
{
    public string Name => "candidates";

    public double Weight => 1;

    public Task RunAsync(AnalysisWork work, IProgress<double> progress, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(work);
        ArgumentNullException.ThrowIfNull(progress);
        var input = work.Input;
        var ranked = work.Models.Where(m => m.Response.Goal != ResponseGoal.None || m.Response.Lower is not null || m.Response.Upper is not null).ToList();
        if (ranked.Count == 0)
        {
            work.CandidateNotes.Add("No response has a goal or a limit, so there is nothing to rank designs by; give a response a goal in the study's set-up.");
            return Task.CompletedTask;
        }
        var waiting = ranked.Where(m => m.Surrogate is null).Select(m => m.Response.Name).ToList();
        if (waiting.Count > 0)
        {
            work.CandidateNotes.Add($"Candidates are ranked once every response with a goal or a limit has a surrogate; {string.Join(", ", waiting)} has none yet.");
            return Task.CompletedTask;
        }

        var objectives = work.Models.Where(m => m.Surrogate is not null)
            .Select((m, i) => ResponseObjective.From(ToResponse(m.Response, i), m.Surrogate!)).ToList();
        var result = CandidateSearch.Find(input.Space, objectives, input.CodedRuns(), input.Constraints, new CandidateOptions
        {
            Count = options.Candidates,
            TimeBudget = options.CandidateBudget,
            Seed = 1,
            Keep = [.. input.Verifications.Select(v => v.Coded)],
        }, cancellationToken);
        work.CandidateNotes.AddRange(result.Notes);
        foreach (var c in result.Candidates)
        {
            var verification = c.Kept is { } kept ? input.Verifications[kept].ToDto() : null;
            work.Candidates.Add(new CandidateDto(
                c.Rank,
                c.Factors,
                c.Responses.ToDictionary(r => r.Response, r => new PredictedValueDto(r.Mean, r.Sd), StringComparer.Ordinal),
                c.Desirability,
                c.ParetoRank,
                c.Extrapolating,
                c.NearestRunDistance,
                c.Responses.Where(r => r.LimitProbability is not null).ToDictionary(r => r.Response, r => r.LimitProbability!.Value, StringComparer.Ordinal) is { Count: > 0 } limits
                    ? limits
                    : null,
                verification));
        }
        work.BestDesirability = result.Candidates.Count == 0 ? null : result.Candidates.Max(c => c.Desirability);
        progress.Report(1);
        return Task.CompletedTask;
    }

    /// <summary>A stored response as the searches read it (the weight defaults to 1).</summary>
    public static Response ToResponse(ResponseSpec spec, int position)
    {
        ArgumentNullException.ThrowIfNull(spec);
        return new Response(position, spec.Name, spec.Goal, spec.Target, spec.Lower, spec.Upper, spec.Weight ?? 1, spec.Unit, spec.Noisy);
    }
}
