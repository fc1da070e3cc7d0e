using Runfold.Shared.Modeling.Selection;

namespace Runfold.Server.Analysis;

/// <summary>When the live analysis refits and how. The two timings people tune are settings
/// (RUNFOLD_ANALYSIS_DEBOUNCE_MS, RUNFOLD_ANALYSIS_MAX_WAIT_MS); the rest are the defaults documented in
/// DEVELOPERS.md ("Live analysis"), replaceable in tests.</summary>
public sealed record AnalysisOptions
{
    /// <summary>A refit starts once no new result has come for this long…</summary>
    public TimeSpan Debounce { get; init; } = TimeSpan.FromMilliseconds(250);

    /// <summary>…or once the oldest result not yet in a snapshot has waited this long. Until then a running refit
    /// that a newer result overtakes is cancelled and started again with it; after that it is let finish.</summary>
    public TimeSpan MaxWait { get; init; } = TimeSpan.FromSeconds(2);

    /// <summary>Every model is compared again once the done runs differ by this share from the last comparison…</summary>
    public double RecompareGrowth { get; init; } = 0.10;

    /// <summary>…but at least by this many runs…</summary>
    public int RecompareMinRuns { get; init; } = 3;

    /// <summary>…or when a response's cross-validated RMSE after a refit with kept hyper-parameters is this many
    /// times that of the previous snapshot.</summary>
    public double RecompareErrorGrowth { get; init; } = 1.2;

    /// <summary>When the last comparison of every model took less than this, every refit compares them all again
    /// (small studies): a kept choice saves nothing there.</summary>
    public TimeSpan AlwaysCompareBelow { get; init; } = TimeSpan.FromMilliseconds(300);

    /// <summary>Refit progress is published only for refits running longer than this; quick refits just end in a
    /// snapshot.</summary>
    public TimeSpan ProgressAfter { get; init; } = TimeSpan.FromMilliseconds(150);

    /// <summary>How often each instance looks for studies whose latest snapshot is behind their results (an
    /// instance that stopped mid-refit, a missed notification).</summary>
    public TimeSpan Sweep { get; init; } = TimeSpan.FromSeconds(30);

    /// <summary>A study's worker that has been idle this long gives its lock back (another instance may take it).</summary>
    public TimeSpan IdleRelease { get; init; } = TimeSpan.FromMinutes(10);

    /// <summary>Model selection settings (seeded, so every instance chooses alike).</summary>
    public SurrogateSelectionOptions Selection { get; init; } = SurrogateSelectionOptions.Default;

    /// <summary>The time the Sobol' indices of all responses together may take in one refit (their sample size is
    /// fitted to it, at least 256 base rows per response).</summary>
    public TimeSpan SensitivityBudget { get; init; } = TimeSpan.FromMilliseconds(150);

    /// <summary>Points of the other factors each value of a main-effect curve is averaged over. The same points
    /// serve every grid value, so the curve's shape is steadier than its level; 64 keeps a refit of 8 factors and
    /// 3 Gaussian processes of 300 runs within the analysis-latency goal (DEVELOPERS.md).</summary>
    public int MainEffectSamples { get; init; } = 64;

    /// <summary>The time the candidate search (differential evolution, NSGA-II, polish) may take in one refit.</summary>
    public TimeSpan CandidateBudget { get; init; } = TimeSpan.FromMilliseconds(250);

    /// <summary>Candidates the search lists besides those being verified.</summary>
    public int Candidates { get; init; } = 5;

    /// <summary>The most points one prediction request may carry.</summary>
    public int MaxPredictPoints { get; init; } = 10_000;

    /// <summary>The most runs one infill wave may add: each pick is searched with the surrogates conditioned on the
    /// picks before it, so a large batch takes long and adds little over a space-filling one.</summary>
    public int MaxInfillRuns { get; init; } = 50;

    /// <summary>The most runs one wave may add.</summary>
    public int MaxWaveRuns { get; init; } = 1_000;
}
