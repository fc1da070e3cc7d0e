// Surrogate selection by cross-validated RMSE (Viana, Haftka & Steffen 2009, "Multiple surrogates: how
// cross-validation errors can help us to obtain the best predictor", Struct. Multidisc. Optim. 39).
using System.Globalization;
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Modeling.GaussianProcess;
using Runfold.Shared.Modeling.Polynomial;
using Runfold.Shared.Modeling.RadialBasis;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Modeling.Selection;

/// <summary>What the automatic selection tries. Every model is seeded from <see cref="Seed"/>.</summary>
public sealed record SurrogateSelectionOptions
{
    /// <summary>The response scatters when a run is repeated (physical tests, stochastic solvers): the Gaussian
    /// process then estimates a noise term.</summary>
    public bool Noisy { get; init; }

    public int Seed { get; init; } = 1;

    public bool Polynomials { get; init; } = true;

    public TermSelection PolynomialTermSelection { get; init; } = TermSelection.StepwiseAicc;

    public bool GaussianProcesses { get; init; } = true;

    public IReadOnlyList<CovarianceKernel> Kernels { get; init; } =
        [CovarianceKernel.Matern52, CovarianceKernel.SquaredExponential, CovarianceKernel.Matern32];

    public int GaussianProcessRestarts { get; init; } = 5;

    public bool RadialBasisFunctions { get; init; } = true;

    /// <summary>Radial basis systems are dense and indefinite (LU, n³); above this many runs they are skipped.</summary>
    public int RadialBasisMaxRuns { get; init; } = 1000;

    public bool Ensemble { get; init; } = true;

    /// <summary>Ensembles combine the best few models of different families.</summary>
    public int EnsembleSize { get; init; } = 3;

    /// <summary>Also try every model on ln y when all values are positive and span at least this ratio.</summary>
    public double LogResponseSpan { get; init; } = 10;

    public bool LogResponse { get; init; } = true;

    /// <summary>Folds for models without a closed-form leave-one-out (stepwise polynomials).</summary>
    public int Folds { get; init; } = 10;

    public static SurrogateSelectionOptions Default { get; } = new();
}

/// <summary>How far a selection has come: <see cref="Completed"/> of <see cref="Total"/> model fits.</summary>
public sealed record SurrogateFitProgress(int Completed, int Total, string Step)
{
    public double Fraction => Total == 0 ? 1 : (double)Completed / Total;
}

/// <summary>One model that was scored.</summary>
public sealed record ModelScore(string Kind, string Description, bool LogResponse, double CvRmse, double CvR2, string CrossValidation);

/// <summary>Why no surrogate could be fitted yet, with the number of runs still needed.</summary>
public sealed record SurrogateRefusal(int Runs, int RunsNeeded, string Reason)
{
    public int RunsStillNeeded => Math.Max(RunsNeeded - Runs, 0);
}

/// <summary>The outcome of a selection: a fitted surrogate, or a refusal.</summary>
public sealed record SurrogateSelectionResult(FittedSurrogate? Surrogate, SurrogateRefusal? Refusal)
{
    public bool IsFitted => Surrogate is not null;
}

/// <summary>
/// The chosen surrogate of one response: the model, its fit check, its kind and the reason it was chosen, and
/// every model that was compared. Immutable; predictions are in the response's units.
/// </summary>
public sealed class FittedSurrogate : IConditionableSurrogate
{
    internal FittedSurrogate(ISurrogateModel model, bool logResponse, FitCheck check, string reason, IReadOnlyList<ModelScore> compared)
    {
        Model = model;
        LogResponse = logResponse;
        Check = check;
        Reason = reason;
        Compared = compared;
    }

    public ISurrogateModel Model { get; }

    public FactorSpace Space => Model.Space;

    public bool HasUncertainty => Model.HasUncertainty;

    /// <summary>"quadratic", "gaussianProcess", "rbf", "ensemble", "constant" …</summary>
    public string Kind => Model.Kind;

    public string Description => Model.Description;

    /// <summary>True when the model (every member, for an ensemble) was fitted to ln y; predictions are
    /// transformed back.</summary>
    public bool LogResponse { get; }

    public FitCheck Check { get; }

    /// <summary>Why this model, as a sentence for the page.</summary>
    public string Reason { get; }

    /// <summary>Every model scored, best first.</summary>
    public IReadOnlyList<ModelScore> Compared { get; }

    public Prediction Predict(Matrix<double> codedPoints) => Model.Predict(codedPoints);

    public double[] PredictMean(Matrix<double> codedPoints) => Model.PredictMean(codedPoints);

    /// <summary>The model with extra runs at fixed hyper-parameters, when it can take them (see
    /// <see cref="IConditionableSurrogate"/>); null otherwise.</summary>
    public IResponseSurrogate? Condition(Matrix<double> codedPoints, IReadOnlyList<double> values) =>
        Model is IConditionableSurrogate c ? c.Condition(codedPoints, values) : null;
}

/// <summary>
/// Fits every applicable surrogate of one response, scores each by cross-validated RMSE (closed-form leave-one-out
/// where the method has one, k-fold otherwise), and keeps the best — or the ensemble weighted by cross-validation
/// error when that scores better.
/// </summary>
public static class SurrogateSelection
{
    /// <summary>Runs the simplest model needs: one per encoded column, one for the intercept, one to spare.</summary>
    public static int MinimumRuns(FactorSpace space) => Math.Max(3, PolynomialModel.RunsNeeded(space, PolynomialFamily.Linear));

    public static SurrogateSelectionResult Fit(
        FactorSpace space, Matrix<double> codedRuns, IReadOnlyList<double> observed,
        SurrogateSelectionOptions? options = null, IProgress<SurrogateFitProgress>? progress = null,
        CancellationToken cancellation = default)
    {
        options ??= SurrogateSelectionOptions.Default;
        TrainingData.Check(space, codedRuns, observed);
        var n = observed.Count;
        var needed = MinimumRuns(space);
        if (n < needed)
        {
            var still = needed - n;
            return new(null, new SurrogateRefusal(n, needed, string.Create(CultureInfo.InvariantCulture,
                $"A surrogate of {space.Count} factor{(space.Count == 1 ? "" : "s")} needs at least {needed} done runs; {n} {(n == 1 ? "is" : "are")} done, so {still} more {(still == 1 ? "is" : "are")} needed.")));
        }
        if (Standardization.Of(observed).IsConstant)
        {
            var constant = new ConstantModel(space, observed[0], n);
            var check = FitCheck.From(observed, constant.CrossValidation.Predicted, "closed-form leave-one-out");
            progress?.Report(new SurrogateFitProgress(1, 1, "constant"));
            return new(new FittedSurrogate(constant, false, check, $"Every one of the {n} runs gave the same value, so the surrogate is that constant.", []), null);
        }

        var useLog = options.LogResponse && observed.All(v => v > 0) && observed.Max() / observed.Min() >= options.LogResponseSpan;
        var plans = Plans(space, n, options).ToList();
        var total = plans.Count * (useLog ? 2 : 1) + (options.Ensemble ? 1 : 0);
        var done = 0;
        var scored = new List<(ISurrogateModel Model, bool Log, double Rmse)>();
        var notes = new List<string>();
        foreach (var log in useLog ? new[] { false, true } : [false])
        {
            var y = log ? observed.Select(v => Math.Log(v)).ToArray() : observed;
            foreach (var (step, fit) in plans)
            {
                cancellation.ThrowIfCancellationRequested();
                var label = log ? step + " on ln y" : step;
                try
                {
                    var inner = fit(codedRuns, y, cancellation);
                    if (inner is not null)
                    {
                        var model = log ? new LogResponseModel(inner) : inner;
                        var rmse = CvRmse(observed, model.CrossValidation.Predicted);
                        if (double.IsFinite(rmse)) scored.Add((model, log, rmse));
                        else notes.Add($"{label}: no finite cross-validated predictions");
                    }
                }
                catch (InvalidOperationException e)
                {
                    notes.Add($"{label}: {e.Message}");
                }
                catch (ArgumentException e)
                {
                    notes.Add($"{label}: {e.Message}");
                }
                progress?.Report(new SurrogateFitProgress(++done, total, label));
            }
        }
        if (scored.Count == 0)
            return new(null, new SurrogateRefusal(n, n + 1, "No model could be fitted to these runs: " + string.Join("; ", notes) + "."));

        scored.Sort((a, b) => a.Rmse.CompareTo(b.Rmse));
        var best = scored[0];
        var choice = best.Model;
        var chosenLog = best.Log;
        var ensembleRmse = double.NaN;
        ISurrogateModel? ensemble = null;
        if (options.Ensemble)
        {
            cancellation.ThrowIfCancellationRequested();
            var members = scored.GroupBy(s => (s.Model.Kind, s.Log)).Select(g => g.First()).Take(options.EnsembleSize).ToList();
            if (members.Count >= 2)
            {
                var weights = EnsembleModel.Weights([.. members.Select(m => m.Rmse)]);
                ensemble = new EnsembleModel([.. members.Select((m, i) => new EnsembleMember(m.Model, weights[i]))]);
                ensembleRmse = CvRmse(observed, ensemble.CrossValidation.Predicted);
                // A tie goes to the single model (parsimony): the ensemble must cut the error by at least 1 %.
                if (ensembleRmse < 0.99 * best.Rmse)
                {
                    choice = ensemble;
                    chosenLog = members.All(m => m.Log);
                }
            }
            progress?.Report(new SurrogateFitProgress(++done, total, "ensemble"));
        }

        var compared = scored.Select(s => Score(s.Model, s.Log, observed)).ToList();
        if (ensemble is not null)
        {
            compared.Add(Score(ensemble, false, observed));
            compared.Sort((a, b) => a.CvRmse.CompareTo(b.CvRmse));
        }
        var checkOfChoice = FitCheck.From(observed, choice.CrossValidation.Predicted, choice.CrossValidation.Describe());
        var reason = ReasonFor(choice, chosenLog, best, scored, ensembleRmse, compared.Count);
        return new(new FittedSurrogate(choice, chosenLog, checkOfChoice, reason, compared), null);
    }

    private static string ReasonFor(ISurrogateModel choice, bool log, (ISurrogateModel Model, bool Log, double Rmse) best,
        List<(ISurrogateModel Model, bool Log, double Rmse)> scored, double ensembleRmse, int comparedCount)
    {
        var method = choice.CrossValidation.Describe();
        if (choice.Kind == "ensemble")
            return string.Create(CultureInfo.InvariantCulture,
                $"The ensemble weighted by cross-validation error has the lowest {method} RMSE ({ensembleRmse:G4}) of the {comparedCount} models compared; the best single model, {Lower(best.Model.Description)}, has {best.Rmse:G4}.")
                + (log ? " All its members model the logarithm of the response, whose values span more than a decade." : "");
        var runnerUp = scored.Skip(1).FirstOrDefault(s => s.Model.Kind != best.Model.Kind || s.Log != best.Log);
        var versus = runnerUp.Model is null ? ""
            : string.Create(CultureInfo.InvariantCulture, $"; the next best, {Lower(runnerUp.Model.Description)}, has {runnerUp.Rmse:G4}");
        var logNote = log ? " Modelling the logarithm of the response cross-validated better, as its values span more than a decade." : "";
        return string.Create(CultureInfo.InvariantCulture,
            $"{choice.Description} has the lowest {method} RMSE ({best.Rmse:G4}) of the {comparedCount} models compared{versus}.{logNote}");
    }

    private static string Lower(string text) => text.Length > 0 ? char.ToLowerInvariant(text[0]) + text[1..] : text;

    private static ModelScore Score(ISurrogateModel model, bool log, IReadOnlyList<double> observed)
    {
        var check = FitCheck.From(observed, model.CrossValidation.Predicted, model.CrossValidation.Describe());
        return new ModelScore(model.Kind, model.Description, log, check.CvRmse, check.CvR2, check.Method);
    }

    private static double CvRmse(IReadOnlyList<double> observed, IReadOnlyList<double> predicted)
    {
        var sum = 0.0;
        for (var i = 0; i < observed.Count; i++)
        {
            var e = observed[i] - predicted[i];
            sum += e * e;
        }
        return Math.Sqrt(sum / observed.Count);
    }

    private delegate ISurrogateModel? Plan(Matrix<double> coded, IReadOnlyList<double> y, CancellationToken cancellation);

    /// <summary>The model fits that apply to this many runs, cheapest first.</summary>
    private static IEnumerable<(string Step, Plan Fit)> Plans(FactorSpace space, int n, SurrogateSelectionOptions options)
    {
        if (options.Polynomials)
            foreach (var family in new[] { PolynomialFamily.Linear, PolynomialFamily.Interaction, PolynomialFamily.PureQuadratic, PolynomialFamily.Quadratic })
            {
                if (n < PolynomialModel.RunsNeeded(space, family)) continue;
                if (family != PolynomialFamily.Linear && PolynomialTerms.Count(space, family) == PolynomialTerms.Count(space, PolynomialFamily.Linear)) continue;
                yield return (PolynomialTerms.KindOf(family), (coded, y, ct) => PolynomialWithCrossValidation(space, coded, y, family, options, ct));
            }
        if (options.GaussianProcesses)
            foreach (var kernel in options.Kernels)
                yield return ($"gaussianProcess {GaussianProcessSurrogate.KernelName(kernel)}", (coded, y, ct) => GaussianProcessModel.Fit(space, coded, y,
                    new GaussianProcessOptions { Kernel = kernel, Noisy = options.Noisy, Restarts = options.GaussianProcessRestarts, Seed = options.Seed }, ct));
        if (options.RadialBasisFunctions && n >= RadialBasisModel.RunsNeeded(space) && n <= options.RadialBasisMaxRuns)
            foreach (var kernel in Enum.GetValues<RadialBasisKernel>())
                yield return ($"rbf {kernel}", (coded, y, ct) => RadialBasisModel.Fit(space, coded, y, new RadialBasisOptions { Kernel = kernel }, ct));
    }

    /// <summary>A polynomial of one family. With stepwise selection the leave-one-out of the final terms would hide
    /// the selection, so the selection is repeated in each of k folds instead.</summary>
    private static PolynomialSurrogate? PolynomialWithCrossValidation(FactorSpace space, Matrix<double> coded, IReadOnlyList<double> y,
        PolynomialFamily family, SurrogateSelectionOptions options, CancellationToken cancellation)
    {
        var polynomialOptions = new PolynomialOptions { Family = family, Selection = options.PolynomialTermSelection, FallBackToSimplerFamily = false };
        var fitted = PolynomialModel.Fit(space, coded, y, polynomialOptions, cancellation).Model;
        if (fitted is null) return null;
        var needsFolds = options.PolynomialTermSelection != TermSelection.None || fitted.CrossValidation.Predicted.Any(double.IsNaN);
        if (!needsFolds) return fitted;
        var predicted = KFold.Predict(coded, y, options.Folds, options.Seed, (trainX, trainY) =>
            PolynomialModel.Fit(space, trainX, trainY, polynomialOptions with { FallBackToSimplerFamily = true }, cancellation).Model, cancellation);
        return predicted is null ? null : fitted.WithCrossValidation(new CrossValidatedPredictions(predicted, CrossValidationMethod.KFold, Math.Min(options.Folds, y.Count)));
    }
}

/// <summary>k-fold cross-validation with folds from a seeded shuffle (same seed, same folds).</summary>
public static class KFold
{
    /// <summary>Predictions of every run by the model fitted without its fold; null when a fold cannot be fitted.</summary>
    public static double[]? Predict(Matrix<double> coded, IReadOnlyList<double> y, int folds, int seed,
        Func<Matrix<double>, IReadOnlyList<double>, IResponseSurrogate?> fit, CancellationToken cancellation = default)
    {
        ArgumentNullException.ThrowIfNull(coded);
        ArgumentNullException.ThrowIfNull(y);
        ArgumentNullException.ThrowIfNull(fit);
        var n = y.Count;
        folds = Math.Clamp(folds, 2, n);
        var order = Enumerable.Range(0, n).ToArray();
        var random = new Random(seed);
        for (var i = n - 1; i > 0; i--)
        {
            var j = random.Next(i + 1);
            (order[i], order[j]) = (order[j], order[i]);
        }
        var predicted = new double[n];
        for (var f = 0; f < folds; f++)
        {
            cancellation.ThrowIfCancellationRequested();
            var test = order.Where((_, position) => position % folds == f).ToArray();
            var train = order.Where((_, position) => position % folds != f).ToArray();
            var model = fit(Matrix<double>.Build.DenseOfRowVectors(train.Select(coded.Row)), [.. train.Select(i => y[i])]);
            if (model is null) return null;
            var p = model.Predict(Matrix<double>.Build.DenseOfRowVectors(test.Select(coded.Row)));
            for (var t = 0; t < test.Length; t++) predicted[test[t]] = p.Mean[t];
        }
        return predicted;
    }
}
