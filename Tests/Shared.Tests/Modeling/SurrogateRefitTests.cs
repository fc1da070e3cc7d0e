using System.Text.Json;
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Modeling;
using Runfold.Shared.Modeling.GaussianProcess;
using Runfold.Shared.Modeling.Polynomial;
using Runfold.Shared.Modeling.RadialBasis;
using Runfold.Shared.Modeling.Selection;
using Runfold.Shared.Studies;
using Runfold.TestFunctions;

namespace Runfold.Shared.Tests.Modeling;

/// <summary>Recipes of fitted surrogates: rebuilt exactly from the same runs (what another server instance does
/// with a stored snapshot), refitted to more runs with the choice and hyper-parameters kept.</summary>
public sealed class SurrogateRefitTests
{
    private static readonly FactorSpace Space = ModelingFixtures.UnitSpace(2);

    // Branin (VLSE) on a seeded scipy Latin hypercube of 40 runs (fixture designs.json); the first 30 runs train,
    // all 40 are the "more runs" of an update.
    private static readonly DesignFixture Branin = ModelingFixtures.Designs.Design("Branin", 40);
    private static readonly Matrix<double> AllRuns = ModelingFixtures.Coded(Branin.Points);
    private static readonly double[] AllValues = ModelingFixtures.Evaluate(PublishedTestFunctions.Branin, Branin.Points);
    private static readonly Matrix<double> Runs = AllRuns.SubMatrix(0, 30, 0, 2);
    private static readonly double[] Values = AllValues[..30];
    private static readonly Matrix<double> Probe = Matrix<double>.Build.Dense(200, 2, (i, j) => Math.Sin(7.3 * i + 3.1 * j + 1));

    public static TheoryData<string> Kinds => new() { "gaussianProcess", "quadratic", "rbf multiquadric", "rbf cubic", "ensemble", "log quadratic" };

    [Theory]
    [MemberData(nameof(Kinds))]
    public void A_recipe_rebuilds_the_same_model_from_the_same_runs(string kind)
    {
        var original = Fitted(kind, Runs, Values);
        // Stored as JSON and read back, as a snapshot's models are.
        var recipe = JsonSerializer.Deserialize<ModelRecipe>(JsonSerializer.Serialize(SurrogateRefit.RecipeOf(original)))!;
        var rebuilt = SurrogateRefit.Refit(Space, Runs, Values, recipe, RefitMode.Rebuild).Surrogate!;

        Assert.Equal(original.Kind, rebuilt.Kind);
        Assert.Equal(original.Description, rebuilt.Description);
        var before = original.Predict(Probe);
        var after = rebuilt.Predict(Probe);
        for (var i = 0; i < Probe.RowCount; i++)
        {
            Assert.Equal(before.Mean[i], after.Mean[i], 1e-9 * Math.Max(1, Math.Abs(before.Mean[i])));
            if (before.StandardDeviation is { } sd) Assert.Equal(sd[i], after.StandardDeviation![i], 1e-7 * Math.Max(1, sd[i]));
        }
    }

    [Fact]
    public void An_update_keeps_the_length_scales_and_estimates_the_signal_variance_in_closed_form()
    {
        var original = GaussianProcessModel.Fit(Space, Runs, Values, new GaussianProcessOptions { Restarts = 2 });
        var recipe = SurrogateRefit.RecipeOf(original);
        var updated = (GaussianProcessSurrogate)SurrogateRefit.Refit(Space, AllRuns, AllValues, recipe, RefitMode.Update).Surrogate!.Model;

        Assert.Equal(original.Hyperparameters.LengthScales, updated.Hyperparameters.LengthScales);
        Assert.False(updated.HyperparametersEstimated);
        // Given the length scales, the maximum-likelihood signal variance is (y − Fβ)ᵀR⁻¹(y − Fβ)/n (Jones, Schonlau &
        // Welch 1998, eq. 4 for a constant trend): the likelihood search ends at that value for its own length
        // scales, so fixing them at the search's end point and profiling gives the search's estimate back.
        var atOptimum = GaussianProcessModel.FitWith(Space, Runs, Values, original.Options, original.Hyperparameters.LengthScales,
            original.Hyperparameters.NoiseVariance / original.Hyperparameters.SignalVariance);
        Assert.Equal(original.Hyperparameters.SignalVariance, atOptimum.Hyperparameters.SignalVariance, 1e-9 * original.Hyperparameters.SignalVariance);
        Assert.Equal(original.LogMarginalLikelihood, atOptimum.LogMarginalLikelihood, 1e-8 * Math.Abs(original.LogMarginalLikelihood));
        // On more runs the profiled variance is that of the new residuals, so it moves.
        Assert.NotEqual(original.Hyperparameters.SignalVariance, updated.Hyperparameters.SignalVariance);
    }

    [Fact]
    public void An_update_refits_the_kept_polynomial_terms_by_least_squares()
    {
        var original = (PolynomialSurrogate)Fitted("quadratic", Runs, Values).Model;
        var updated = (PolynomialSurrogate)SurrogateRefit.Refit(Space, AllRuns, AllValues, SurrogateRefit.RecipeOf(original), RefitMode.Update).Surrogate!.Model;

        Assert.Equal(original.Terms.Select(t => t.Name), updated.Terms.Select(t => t.Name));
        // The same terms by MathNet's QR least squares (an independent solver) on all 40 runs.
        var design = Matrix<double>.Build.Dense(AllRuns.RowCount, updated.Terms.Count, (i, j) => Term(updated.Terms[j].Name, AllRuns[i, 0], AllRuns[i, 1]));
        var beta = design.QR().Solve(Vector<double>.Build.DenseOfArray(AllValues));
        Assert.Equal(beta.ToArray(), updated.Coefficients.Select(c => c.Estimate), new Tolerance(1e-8));
        // Leave-one-out of the kept terms: PRESS residuals eᵢ/(1 − hᵢᵢ) (Montgomery 2013, §10.7).
        var hat = design * (design.TransposeThisAndMultiply(design)).Inverse() * design.Transpose();
        var fitted = design * beta;
        for (var i = 0; i < AllValues.Length; i++)
        {
            var loo = AllValues[i] - (AllValues[i] - fitted[i]) / (1 - hat[i, i]);
            Assert.Equal(loo, updated.CrossValidation.Predicted[i], 1e-6 * Math.Max(1, Math.Abs(loo)));
        }
    }

    [Fact]
    public void An_update_of_an_ensemble_weights_its_members_by_their_new_errors()
    {
        var ensemble = (EnsembleModel)Fitted("ensemble", Runs, Values).Model;
        var updated = (EnsembleModel)SurrogateRefit.Refit(Space, AllRuns, AllValues, SurrogateRefit.RecipeOf(ensemble), RefitMode.Update).Surrogate!.Model;

        var errors = updated.Members.Select(m => Math.Sqrt(AllValues.Select((y, i) => Math.Pow(y - m.Model.CrossValidation.Predicted[i], 2)).Average())).ToArray();
        Assert.Equal(EnsembleModel.Weights(errors), updated.Members.Select(m => m.Weight), new Tolerance(1e-12));
        Assert.NotEqual(ensemble.Members.Select(m => m.Weight), updated.Members.Select(m => m.Weight));
    }

    [Fact]
    public void A_recipe_that_no_longer_fits_the_runs_says_why()
    {
        var constant = SurrogateRefit.Refit(Space, Runs, Values, new ModelRecipe { Kind = "constant" }, RefitMode.Update);
        Assert.Equal("The response varies now, so a constant no longer describes it.", constant.NotApplicable);

        var log = SurrogateRefit.RecipeOf(Fitted("log quadratic", Runs, Values));
        var negative = SurrogateRefit.Refit(Space, Runs, [.. Values.Select(v => v - 20)], log, RefitMode.Update);
        Assert.Equal("The model was fitted to the logarithm of the response, and some values are now zero or negative.", negative.NotApplicable);

        var quadratic = SurrogateRefit.RecipeOf(Fitted("quadratic", Runs, Values)) with { Terms = ["intercept", "x1", "x2", "x1·x2", "x1²", "x2²"] };
        var few = SurrogateRefit.Refit(Space, Runs.SubMatrix(0, 5, 0, 2), Values[..5], quadratic, RefitMode.Update);
        Assert.Equal("The 6 kept terms of the quadratic model cannot be estimated from these 5 runs.", few.NotApplicable);

        // A response that stopped varying is a constant whatever the recipe.
        var flat = SurrogateRefit.Refit(Space, Runs, [.. Values.Select(_ => 3.5)], quadratic, RefitMode.Update);
        Assert.Equal("constant", flat.Surrogate!.Kind);
    }

    private static FittedSurrogate Fitted(string kind, Matrix<double> x, double[] y) => kind switch
    {
        "gaussianProcess" => Wrap(GaussianProcessModel.Fit(Space, x, y, new GaussianProcessOptions { Restarts = 2 }), x, y),
        "quadratic" => Wrap(PolynomialModel.Fit(Space, x, y).Model!, x, y),
        "rbf multiquadric" => Wrap(RadialBasisModel.Fit(Space, x, y, new RadialBasisOptions { Kernel = RadialBasisKernel.Multiquadric }), x, y),
        "rbf cubic" => Wrap(RadialBasisModel.Fit(Space, x, y), x, y),
        "ensemble" => Wrap(new EnsembleModel(
        [
            new EnsembleMember(GaussianProcessModel.Fit(Space, x, y, new GaussianProcessOptions { Restarts = 2 }), 0.5),
            new EnsembleMember(PolynomialModel.Fit(Space, x, y).Model!, 0.3),
            new EnsembleMember(RadialBasisModel.Fit(Space, x, y), 0.2),
        ]), x, y),
        "log quadratic" => Wrap(new LogResponseModel(PolynomialModel.Fit(Space, x, [.. y.Select(v => Math.Log(v))]).Model!), x, y, log: true),
        _ => throw new ArgumentOutOfRangeException(nameof(kind), kind, null),
    };

    private static FittedSurrogate Wrap(ISurrogateModel model, Matrix<double> x, double[] y, bool log = false) =>
        new(model, log, FitCheck.From(y, model.CrossValidation.Predicted, model.CrossValidation.Describe()), "test", []);

    private static double Term(string name, double a, double b) => name switch
    {
        "intercept" => 1,
        "x1" => a,
        "x2" => b,
        "x1·x2" => a * b,
        "x1²" => a * a,
        "x2²" => b * b,
        _ => throw new ArgumentOutOfRangeException(nameof(name), name, null),
    };

    private sealed class Tolerance(double tolerance) : IEqualityComparer<double>
    {
        public bool Equals(double x, double y) => Math.Abs(x - y) <= tolerance * Math.Max(1, Math.Abs(x));

        public int GetHashCode(double obj) => 0;
    }
}
