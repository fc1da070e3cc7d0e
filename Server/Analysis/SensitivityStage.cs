using Runfold.Shared.Sensitivity;
using Runfold.Shared.Studies;

namespace Runfold.Server.Analysis;

/// <summary>
/// The "sensitivity" stage of a snapshot: per response with a model, Sobol' first-order and total indices with
/// bootstrap intervals and the direction of each effect (<see cref="SobolAnalysis"/>, sample size fitted to
/// <see cref="AnalysisOptions.SensitivityBudget"/>), and the main-effect curves for the plots.
/// </summary>
public sealed class SensitivityStage(AnalysisOptions options) : IAnalysisStage
{
    public string Name => "sensitivity";

    public double Weight => 1;

    public Task RunAsync(AnalysisWork work, IProgress<double> progress, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(work);
        ArgumentNullException.ThrowIfNull(progress);
        var fitted = work.Models.Where(m => m.Surrogate is not null).ToList();
        if (fitted.Count == 0) return Task.CompletedTask;
        // The responses are independent: side by side on the machine's cores, the budget is wall time.
        var lanes = Math.Clamp(Environment.ProcessorCount, 1, fitted.Count);
        var budget = options.SensitivityBudget * lanes / fitted.Count;
        var sensitivity = new IReadOnlyList<FactorSensitivityDto>[fitted.Count];
        var curves = new IReadOnlyList<MainEffectDto>[fitted.Count];
        var finished = 0;
        var gate = new Lock();
        Parallel.For(0, fitted.Count, new ParallelOptions { MaxDegreeOfParallelism = lanes, CancellationToken = cancellationToken }, i =>
        {
            var surrogate = fitted[i].Surrogate!;
            // Seeded alike for every response and refit, so a ranking moves only when the model does.
            var indices = SobolAnalysis.Estimate(surrogate, new SobolOptions { TimeBudget = budget, Seed = 1 }, cancellationToken);
            sensitivity[i] = [.. indices.Factors.Select(f => new FactorSensitivityDto(
                f.Name, f.FirstOrder, f.Total, f.TotalLow, f.TotalHigh, f.FirstOrderLow, f.FirstOrderHigh, ToDto(f.Direction)))];
            curves[i] = [.. MainEffects.Curves(surrogate, new MainEffectOptions { Samples = options.MainEffectSamples, Seed = 1 }, cancellationToken)
                .Select(c => new MainEffectDto(c.Name, c.Natural, c.Mean, c.Spread))];
            lock (gate) progress.Report((double)++finished / fitted.Count); // in order, so the percent never goes back
        });
        for (var i = 0; i < fitted.Count; i++)
        {
            work.Sensitivity[fitted[i].Response.Name] = sensitivity[i];
            work.MainEffects[fitted[i].Response.Name] = curves[i];
        }
        return Task.CompletedTask;
    }

    private static EffectDirectionDto ToDto(EffectDirection direction) => direction switch
    {
        EffectDirection.Raises => EffectDirectionDto.Raises,
        EffectDirection.Lowers => EffectDirectionDto.Lowers,
        EffectDirection.Mixed => EffectDirectionDto.Mixed,
        _ => EffectDirectionDto.None,
    };
}
