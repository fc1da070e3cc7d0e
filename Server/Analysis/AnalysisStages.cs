using Runfold.Shared.Modeling.Selection;
using Runfold.Shared.Studies;

namespace Runfold.Server.Analysis;

/// <summary>
/// A stage of the snapshot after the models are fitted and before it is stored — sensitivity (Sobol' indices and
/// main effects per response) and candidates (desirability, Pareto ranks, NSGA-II) — registered in DI and run in
/// registration order. Each reads the fitted models of <see cref="AnalysisWork"/> and fills its own part.
/// </summary>
public interface IAnalysisStage
{
    /// <summary>The stage as the progress shows it: "sensitivity", "candidates".</summary>
    string Name { get; }

    /// <summary>Its share of the progress bar relative to fitting one response (1).</summary>
    double Weight { get; }

    /// <summary>Reports its own progress as a fraction 0…1; checks <paramref name="cancellationToken"/> often, a
    /// newer result cancels the refit.</summary>
    Task RunAsync(AnalysisWork work, IProgress<double> progress, CancellationToken cancellationToken);
}

/// <summary>The model of one response in a refit, or why there is none yet.</summary>
/// <param name="Choice">How the model was chosen (null without a model).</param>
/// <param name="ComparedNow">Every model was compared in this refit (not a kept choice refitted).</param>
public sealed record ResponseModel(
    ResponseSpec Response,
    ResponseData Data,
    FittedSurrogate? Surrogate,
    ModelChoice? Choice,
    bool ComparedNow,
    string? Refusal = null,
    int? RunsStillNeeded = null);

/// <summary>One refit on its way to a snapshot: the runs read, the fitted models, and the parts the later stages
/// fill (sensitivity and main effects per response, candidates).</summary>
public sealed class AnalysisWork(AnalysisInput input, IReadOnlyList<ResponseModel> models)
{
    public AnalysisInput Input { get; } = input;

    public IReadOnlyList<ResponseModel> Models { get; } = models;

    public Dictionary<string, IReadOnlyList<FactorSensitivityDto>> Sensitivity { get; } = new(StringComparer.Ordinal);

    public Dictionary<string, IReadOnlyList<MainEffectDto>> MainEffects { get; } = new(StringComparer.Ordinal);

    public List<CandidateDto> Candidates { get; } = [];

    /// <summary>What the candidate search wants the reader to know (no goal, too few distinct designs, …).</summary>
    public List<string> CandidateNotes { get; } = [];

    /// <summary>The best candidate's desirability, for the convergence view.</summary>
    public double? BestDesirability { get; set; }

    /// <summary>How long each part took ("fits", then each stage by name), for the log line of the snapshot.</summary>
    public List<(string Part, TimeSpan Took)> Timings { get; } = [];

    /// <summary>"fits 84 ms, sensitivity 310 ms, candidates 298 ms".</summary>
    public string DescribeTimings() =>
        string.Join(", ", Timings.Select(t => $"{t.Part} {t.Took.TotalMilliseconds.ToString("N0", System.Globalization.CultureInfo.InvariantCulture)} ms"));
}
