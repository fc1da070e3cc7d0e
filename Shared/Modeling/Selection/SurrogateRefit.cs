// Refitting a chosen surrogate to a changed set of runs without comparing the models again: the same family, terms,
// kernel, shape and Gaussian-process hyper-parameters (Rasmussen & Williams 2006, eq. 2.25–2.26 with θ fixed),
// ensemble weights from the members' new cross-validation errors (Goel, Haftka, Shyy & Queipo 2007).
using System.Globalization;
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Modeling.GaussianProcess;
using Runfold.Shared.Modeling.Polynomial;
using Runfold.Shared.Modeling.RadialBasis;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Modeling.Selection;

/// <summary>
/// What a fitted surrogate is, as plain data (serialisable): enough to fit the same model to other runs, or to
/// rebuild it exactly from the same runs. Enum-valued choices are stored by their names.
/// </summary>
public sealed record ModelRecipe
{
    /// <summary>The model's kind: "linear", "interaction", "pureQuadratic", "quadratic", "gaussianProcess", "rbf",
    /// "constant" or "ensemble".</summary>
    public required string Kind { get; init; }

    /// <summary>The model is fitted to ln y.</summary>
    public bool LogResponse { get; init; }

    /// <summary>Polynomial: how its terms were chosen (<see cref="TermSelection"/> name) and the terms kept.</summary>
    public string? Selection { get; init; }

    public IReadOnlyList<string>? Terms { get; init; }

    /// <summary>Gaussian process: <see cref="CovarianceKernel"/> name; radial basis: <see cref="RadialBasisKernel"/> name.</summary>
    public string? Kernel { get; init; }

    /// <summary>Gaussian process: <see cref="GaussianProcessTrend"/> name, noise model, nugget and hyper-parameters
    /// (standardised response units, length scales per encoded column).</summary>
    public string? Trend { get; init; }

    public bool Noisy { get; init; }

    public bool Restricted { get; init; }

    public double? Nugget { get; init; }

    public IReadOnlyList<double>? LengthScales { get; init; }

    public double? SignalVariance { get; init; }

    public double? NoiseVariance { get; init; }

    /// <summary>Radial basis: the multiquadric shape.</summary>
    public double? Shape { get; init; }

    /// <summary>The weight of an ensemble member.</summary>
    public double? Weight { get; init; }

    /// <summary>Ensemble: its members.</summary>
    public IReadOnlyList<ModelRecipe>? Members { get; init; }
}

/// <summary>How a recipe is fitted to runs.</summary>
public enum RefitMode
{
    /// <summary>Every recorded choice as it is, ensemble weights included: on the same runs, the same model.</summary>
    Rebuild,

    /// <summary>To changed runs: the family, terms, kernel, shape and hyper-parameters as recorded; ensemble
    /// weights recomputed from the members' new cross-validation errors.</summary>
    Update,
}

/// <summary>The refitted surrogate, or why the recipe does not apply to these runs (then compare the models again).</summary>
public sealed record SurrogateRefitResult(FittedSurrogate? Surrogate, string? NotApplicable)
{
    public bool IsFitted => Surrogate is not null;
}

/// <summary>Recipes of fitted surrogates and their refits.</summary>
public static class SurrogateRefit
{
    public static ModelRecipe RecipeOf(FittedSurrogate surrogate)
    {
        ArgumentNullException.ThrowIfNull(surrogate);
        return RecipeOf(surrogate.Model);
    }

    public static ModelRecipe RecipeOf(ISurrogateModel model) => model switch
    {
        LogResponseModel log => RecipeOf(log.Inner) with { LogResponse = true },
        PolynomialSurrogate polynomial => new ModelRecipe
        {
            Kind = polynomial.Kind,
            Selection = polynomial.Selection.ToString(),
            Terms = [.. polynomial.Terms.Select(t => t.Name)],
        },
        GaussianProcessSurrogate process => new ModelRecipe
        {
            Kind = process.Kind,
            Kernel = process.Options.Kernel.ToString(),
            Trend = process.Options.Trend.ToString(),
            Noisy = process.Options.Noisy,
            Restricted = process.Options.Restricted,
            Nugget = process.Options.Nugget,
            LengthScales = [.. process.Hyperparameters.LengthScales],
            SignalVariance = process.Hyperparameters.SignalVariance,
            NoiseVariance = process.Hyperparameters.NoiseVariance,
        },
        RadialBasisSurrogate radial => new ModelRecipe { Kind = radial.Kind, Kernel = radial.Kernel.ToString(), Shape = radial.Shape },
        ConstantModel constant => new ModelRecipe { Kind = constant.Kind },
        EnsembleModel ensemble => new ModelRecipe
        {
            Kind = ensemble.Kind,
            LogResponse = ensemble.Members.All(m => m.Model is LogResponseModel),
            Members = [.. ensemble.Members.Select(m => RecipeOf(m.Model) with { Weight = m.Weight })],
        },
        null => throw new ArgumentNullException(nameof(model)),
        _ => throw new ArgumentException($"A {model.GetType().Name} has no recipe.", nameof(model)),
    };

    /// <summary>
    /// Fits <paramref name="recipe"/> to the runs. The fit check is that of the refitted model (closed-form
    /// leave-one-out for every kind: a polynomial's kept terms are not selected again, so its PRESS does not repeat
    /// the selection). <paramref name="reason"/> and <paramref name="compared"/> are carried into the result
    /// (typically those of the comparison that chose the recipe).
    /// </summary>
    public static SurrogateRefitResult Refit(
        FactorSpace space, Matrix<double> codedRuns, IReadOnlyList<double> observed, ModelRecipe recipe, RefitMode mode,
        string? reason = null, IReadOnlyList<ModelScore>? compared = null, CancellationToken cancellation = default)
    {
        ArgumentNullException.ThrowIfNull(recipe);
        TrainingData.Check(space, codedRuns, observed);
        var n = observed.Count;
        var needed = SurrogateSelection.MinimumRuns(space);
        if (n < needed)
            return NotApplicable(string.Create(CultureInfo.InvariantCulture, $"{n} runs are fewer than the {needed} any surrogate of these factors needs."));
        if (Standardization.Of(observed).IsConstant)
        {
            var constant = new ConstantModel(space, observed[0], n);
            return Fitted(constant, false, observed, reason ?? $"Every one of the {n} runs gave the same value, so the surrogate is that constant.", compared);
        }
        if (recipe.Kind == "constant") return NotApplicable("The response varies now, so a constant no longer describes it.");

        ISurrogateModel? model;
        string? why;
        try
        {
            model = Build(space, codedRuns, observed, recipe, mode, cancellation, out why);
        }
        catch (InvalidOperationException e)
        {
            (model, why) = (null, e.Message);
        }
        catch (ArgumentException e)
        {
            (model, why) = (null, e.Message);
        }
        if (model is null) return NotApplicable(why ?? "The recipe cannot be fitted to these runs.");
        if (model.CrossValidation.Predicted.Any(v => !double.IsFinite(v)))
            return NotApplicable("Some runs have no finite cross-validated prediction with this model.");
        var log = recipe.Kind == "ensemble" ? recipe.Members!.All(m => m.LogResponse) : recipe.LogResponse;
        return Fitted(model, log, observed, reason ?? $"{model.Description}, refitted to these {n} runs without comparing the models again.", compared);
    }

    private static SurrogateRefitResult Fitted(ISurrogateModel model, bool log, IReadOnlyList<double> observed, string reason, IReadOnlyList<ModelScore>? compared)
    {
        var check = FitCheck.From(observed, model.CrossValidation.Predicted, model.CrossValidation.Describe());
        return new(new FittedSurrogate(model, log, check, reason, compared ?? []), null);
    }

    private static SurrogateRefitResult NotApplicable(string why) => new(null, why);

    private static ISurrogateModel? Build(FactorSpace space, Matrix<double> coded, IReadOnlyList<double> observed, ModelRecipe recipe,
        RefitMode mode, CancellationToken cancellation, out string? why)
    {
        why = null;
        if (recipe.Kind == "ensemble") return Ensemble(space, coded, observed, recipe, mode, cancellation, out why);
        if (!recipe.LogResponse) return Single(space, coded, observed, recipe, mode, cancellation, out why);
        if (observed.Any(v => !(v > 0)))
        {
            why = "The model was fitted to the logarithm of the response, and some values are now zero or negative.";
            return null;
        }
        var inner = Single(space, coded, [.. observed.Select(v => Math.Log(v))], recipe with { LogResponse = false }, mode, cancellation, out why);
        return inner is null ? null : new LogResponseModel(inner);
    }

    private static ISurrogateModel? Single(FactorSpace space, Matrix<double> coded, IReadOnlyList<double> y, ModelRecipe recipe,
        RefitMode mode, CancellationToken cancellation, out string? why)
    {
        why = null;
        cancellation.ThrowIfCancellationRequested();
        switch (recipe.Kind)
        {
            case "linear" or "interaction" or "pureQuadratic" or "quadratic":
                var family = recipe.Kind switch
                {
                    "linear" => PolynomialFamily.Linear,
                    "interaction" => PolynomialFamily.Interaction,
                    "pureQuadratic" => PolynomialFamily.PureQuadratic,
                    _ => PolynomialFamily.Quadratic,
                };
                var selection = Enum.TryParse<TermSelection>(recipe.Selection, true, out var s) ? s : TermSelection.None;
                var polynomial = PolynomialModel.FitTerms(space, coded, y, family, recipe.Terms ?? [], selection);
                if (polynomial is null)
                    why = string.Create(CultureInfo.InvariantCulture,
                        $"The {recipe.Terms?.Count ?? 0} kept terms of the {recipe.Kind} model cannot be estimated from these {y.Count} runs.");
                return polynomial;

            case "gaussianProcess":
                var options = new GaussianProcessOptions
                {
                    Kernel = Parse<CovarianceKernel>(recipe.Kernel),
                    Trend = Parse<GaussianProcessTrend>(recipe.Trend),
                    Noisy = recipe.Noisy,
                    Restricted = recipe.Restricted,
                    Nugget = recipe.Nugget ?? GaussianProcessOptions.Default.Nugget,
                };
                var scales = recipe.LengthScales ?? throw new ArgumentException("The recipe has no length scales.", nameof(recipe));
                var signal = recipe.SignalVariance ?? 0;
                var noise = recipe.NoiseVariance ?? 0;
                // Rebuilt exactly as recorded; refitted to changed runs, the signal variance is re-estimated in
                // closed form, which keeps the predictive standard deviations in scale with the new runs.
                return mode == RefitMode.Rebuild
                    ? GaussianProcessModel.FitWith(space, coded, y, options, new GaussianProcessHyperparameters(scales, signal, noise))
                    : GaussianProcessModel.FitWith(space, coded, y, options, scales, signal > 0 ? noise / signal : options.Nugget);

            case "rbf":
                var kernel = Parse<RadialBasisKernel>(recipe.Kernel);
                return RadialBasisModel.Fit(space, coded, y, new RadialBasisOptions
                {
                    Kernel = kernel,
                    Shape = kernel == RadialBasisKernel.Multiquadric ? recipe.Shape : null,
                }, cancellation);

            default:
                why = $"'{recipe.Kind}' is not a model kind that can be refitted.";
                return null;
        }
    }

    private static EnsembleModel? Ensemble(FactorSpace space, Matrix<double> coded, IReadOnlyList<double> observed, ModelRecipe recipe,
        RefitMode mode, CancellationToken cancellation, out string? why)
    {
        why = null;
        var members = new List<ISurrogateModel>();
        foreach (var member in recipe.Members ?? [])
        {
            var model = Build(space, coded, observed, member, mode, cancellation, out why);
            if (model is null) return null;
            members.Add(model);
        }
        if (members.Count < 2)
        {
            why = "An ensemble needs at least two members.";
            return null;
        }
        var weights = mode == RefitMode.Rebuild && recipe.Members!.All(m => m.Weight is > 0)
            ? [.. recipe.Members!.Select(m => m.Weight!.Value)]
            : EnsembleModel.Weights([.. members.Select(m => Rmse(observed, m.CrossValidation.Predicted))]);
        return new EnsembleModel([.. members.Select((m, i) => new EnsembleMember(m, weights[i]))]);
    }

    private static double Rmse(IReadOnlyList<double> observed, IReadOnlyList<double> predicted)
    {
        var sum = 0.0;
        for (var i = 0; i < observed.Count; i++) sum += (observed[i] - predicted[i]) * (observed[i] - predicted[i]);
        return Math.Sqrt(sum / observed.Count);
    }

    private static T Parse<T>(string? name) where T : struct, Enum =>
        Enum.TryParse<T>(name, ignoreCase: true, out var value) && Enum.IsDefined(value)
            ? value
            : throw new ArgumentException($"'{name}' is not a {typeof(T).Name}.", nameof(name));
}
