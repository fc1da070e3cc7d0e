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
        var budget = options.SensitivityBudget / fitted.Count;
        for (var i = 0; i < fitted.Count; i++)
        {
            cancellationToken.ThrowIfCancellationRequested();
            var model = fitted[i];
            var surrogate = model.Surrogate!;
            // Seeded alike for every response and refit, so a ranking moves only when the model does.
            var indices = SobolAnalysis.Estimate(surrogate, new SobolOptions { TimeBudget = budget, Seed = 1 }, cancellationToken);
            work.Sensitivity[model.Response.Name] = [.. indices.Factors.Select(f => new FactorSensitivityDto(
                f.Name, f.FirstOrder, f.Total, f.TotalLow, f.TotalHigh, f.FirstOrderLow, f.FirstOrderHigh, ToDto(f.Direction)))];
            progress.Report((i + 0.7) / fitted.Count);
            var curves = MainEffects.Curves(surrogate, new MainEffectOptions { Samples = options.MainEffectSamples, Seed = 1 }, cancellationToken);
            work.MainEffects[model.Response.Name] = [.. curves.Select(c => new MainEffectDto(c.Name, c.Natural, c.Mean, c.Spread))];
            progress.Report((i + 1.0) / fitted.Count);
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
