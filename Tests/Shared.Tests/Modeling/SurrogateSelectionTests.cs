using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Modeling;
using Runfold.Shared.Modeling.Selection;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Modeling;

public sealed class SurrogateSelectionTests
{
    private sealed record ReferenceCase(string Function, int Runs, string Kernel, double SklearnHoldoutNrmse);

    private sealed record ReferenceFile(ReferenceCase[] Cases);

    [Theory]
    [InlineData("Branin", 20)]
    [InlineData("Branin", 40)]
    [InlineData("Hartmann-6", 60)]
    [InlineData("Hartmann-6", 120)]
    [InlineData("Borehole", 80)]
    [InlineData("Borehole", 160)]
    public void The_automatic_choice_predicts_published_test_functions_on_a_sobol_holdout(string function, int runs)
    {
        // Test functions: Virtual Library of Simulation Experiments (Surjanovic & Bingham) — Branin, Hartmann-6,
        // Borehole. Designs: seeded scipy LatinHypercube of 10·k and 20·k runs; holdout: the first 2,000 points of the
        // unscrambled scipy Sobol' sequence (fixture designs.json).
        // Threshold: holdout NRMSE (RMSE over the holdout's range) at most 1.5 × the better of scikit-learn's two
        // Gaussian processes (squared-exponential, Matérn 5/2; maximum likelihood, 5 restarts) on the same design
        // (fixture gp_max_likelihood.json). The automatic choice sees only the training runs and chooses by
        // cross-validation, so it may miss the model that is best in hindsight; 1.5 allows for that (CV-based
        // selection lands within about that factor of the best surrogate, Viana, Haftka & Steffen 2009 — from memory)
        // while still failing any model that is clearly worse than a tuned Gaussian process.
        var reference = ModelingFixtures.Load<ReferenceFile>("gp_max_likelihood.json").Cases
            .Where(c => c.Function == function && c.Runs == runs).Min(c => c.SklearnHoldoutNrmse);
        var threshold = 1.5 * reference;
        var f = ModelingFixtures.Function(function);
        var design = ModelingFixtures.Designs.Design(function, runs);
        var holdout = ModelingFixtures.Designs.Holdout[f.Dimension.ToString(System.Globalization.CultureInfo.InvariantCulture)];
        var result = SurrogateSelection.Fit(ModelingFixtures.UnitSpace(f.Dimension), ModelingFixtures.Coded(design.Points),
            ModelingFixtures.Evaluate(f, design.Points));

        var surrogate = result.Surrogate!;
        var truth = ModelingFixtures.Evaluate(f, holdout);
        var predicted = surrogate.Predict(ModelingFixtures.Coded(holdout)).Mean;
        var rmse = Math.Sqrt(truth.Zip(predicted, (t, p) => (t - p) * (t - p)).Average());
        var nrmse = rmse / (truth.Max() - truth.Min());
        Assert.True(nrmse <= threshold, $"{function} n={runs}: holdout NRMSE {nrmse:G4} above {threshold:G4}; chose {surrogate.Description}. {surrogate.Reason}");
        Assert.False(string.IsNullOrWhiteSpace(surrogate.Reason));
        Assert.Equal(surrogate.Kind, surrogate.Compared[0].Kind);
    }

    [Fact]
    public void Too_few_runs_are_refused_with_the_number_still_needed()
    {
        var space = ModelingFixtures.UnitSpace(4);
        var x = Matrix<double>.Build.Dense(4, 4, (i, j) => i == j ? 1 : -0.5);
        var result = SurrogateSelection.Fit(space, x, [1, 2, 3, 4]);
        Assert.False(result.IsFitted);
        Assert.Equal(6, result.Refusal!.RunsNeeded);
        Assert.Equal(2, result.Refusal.RunsStillNeeded);
        Assert.Equal("A surrogate of 4 factors needs at least 6 done runs; 4 are done, so 2 more are needed.", result.Refusal.Reason);
    }

    [Fact]
    public void The_fit_check_follows_its_definitions()
    {
        var design = ModelingFixtures.Designs.Design("Branin", 20);
        var y = design.Values;
        var result = SurrogateSelection.Fit(ModelingFixtures.UnitSpace(2), ModelingFixtures.Coded(design.Points), y,
            new SurrogateSelectionOptions { LogResponse = false });
        var check = result.Surrogate!.Check;
        var cv = result.Surrogate.Model.CrossValidation.Predicted;
        var press = y.Zip(cv, (o, p) => (o - p) * (o - p)).Sum();
        var mean = y.Average();
        Assert.Equal(1 - press / y.Sum(v => (v - mean) * (v - mean)), check.CvR2, 12);
        Assert.Equal(Math.Sqrt(press / y.Length), check.CvRmse, 12);
        Assert.Equal(check.CvRmse / (y.Max() - y.Min()), check.Nrmse, 12);
        Assert.Equal(y.Zip(cv, (o, p) => Math.Abs(o - p)).Max(), check.MaxAbsError, 12);
        Assert.Equal(y, check.Observed);
        Assert.Equal(cv, check.Predicted);
        Assert.Equal(y.Zip(cv, (o, p) => o - p), check.Residuals);
    }

    [Fact]
    public void Ensemble_weights_follow_Goel_et_al()
    {
        // Goel et al. (2007): w*ᵢ = (Eᵢ + 0.05·Ē)^−1, normalised. For E = (1, 2, 4): Ē = 7/3.
        var weights = EnsembleModel.Weights([1, 2, 4]);
        var raw = new[] { 1 / (1 + 0.05 * 7 / 3), 1 / (2 + 0.05 * 7 / 3), 1 / (4 + 0.05 * 7 / 3) };
        for (var i = 0; i < 3; i++) Assert.Equal(raw[i] / raw.Sum(), weights[i], 14);
        Assert.Equal(1, weights.Sum(), 14);
    }

    [Fact]
    public void The_ensemble_is_chosen_only_when_it_cross_validates_at_least_one_percent_better()
    {
        var design = ModelingFixtures.Designs.Design("Hartmann-6", 60);
        var result = SurrogateSelection.Fit(ModelingFixtures.UnitSpace(6), ModelingFixtures.Coded(design.Points), design.Values);
        var ensembleScore = result.Surrogate!.Compared.Single(c => c.Kind == "ensemble");
        var bestSingle = result.Surrogate.Compared.Where(c => c.Kind != "ensemble").Min(c => c.CvRmse);
        Assert.Equal(ensembleScore.CvRmse < 0.99 * bestSingle, result.Surrogate.Kind == "ensemble");
    }

    [Fact]
    public void An_ensemble_predicts_and_cross_validates_as_the_weighted_members()
    {
        var design = ModelingFixtures.Designs.Design("Branin", 20);
        var space = ModelingFixtures.UnitSpace(2);
        var x = ModelingFixtures.Coded(design.Points);
        var gp = Runfold.Shared.Modeling.GaussianProcess.GaussianProcessModel.Fit(space, x, design.Values);
        var rbf = Runfold.Shared.Modeling.RadialBasis.RadialBasisModel.Fit(space, x, design.Values);
        var ensemble = new EnsembleModel([new EnsembleMember(gp, 0.7), new EnsembleMember(rbf, 0.3)]);
        var probe = Matrix<double>.Build.DenseOfRowArrays([0.1, 0.2], [-0.8, 0.6]);
        var p = ensemble.Predict(probe);
        var pg = gp.Predict(probe);
        var pr = rbf.Predict(probe);
        for (var i = 0; i < 2; i++)
        {
            var mean = 0.7 * pg.Mean[i] + 0.3 * pr.Mean[i];
            Assert.Equal(mean, p.Mean[i], 1e-9);
            // Only the Gaussian process has a standard deviation; the spread of the member means adds to it.
            var spread = 0.7 * Math.Pow(pg.Mean[i] - mean, 2) + 0.3 * Math.Pow(pr.Mean[i] - mean, 2);
            Assert.Equal(Math.Sqrt(pg.StandardDeviation![i] * pg.StandardDeviation[i] + spread), p.StandardDeviation![i], 1e-9);
        }
        for (var i = 0; i < 20; i++)
            Assert.Equal(0.7 * gp.CrossValidation.Predicted[i] + 0.3 * rbf.CrossValidation.Predicted[i], ensemble.CrossValidation.Predicted[i], 1e-9);
    }

    [Fact]
    public void A_positive_response_spanning_decades_may_be_modelled_in_log_space()
    {
        // y = exp(3·x1 + 2·x2) spans about four decades over the square; its logarithm is a plane.
        var design = ModelingFixtures.Designs.Design("Branin", 40);
        var x = ModelingFixtures.Coded(design.Points);
        var y = Enumerable.Range(0, x.RowCount).Select(i => Math.Exp(3 * x[i, 0] + 2 * x[i, 1])).ToArray();
        var result = SurrogateSelection.Fit(ModelingFixtures.UnitSpace(2), x, y);
        Assert.True(result.Surrogate!.LogResponse, result.Surrogate.Reason);
        Assert.Contains("logarithm", result.Surrogate.Reason, StringComparison.Ordinal);
        var p = result.Surrogate.Predict(Matrix<double>.Build.DenseOfRowArrays([0.5, -0.25]));
        Assert.Equal(Math.Exp(1.5 - 0.5), p.Mean[0], 6);
    }

    [Fact]
    public void A_constant_response_gets_a_constant_surrogate()
    {
        var design = ModelingFixtures.Designs.Design("Branin", 20);
        var result = SurrogateSelection.Fit(ModelingFixtures.UnitSpace(2), ModelingFixtures.Coded(design.Points), Enumerable.Repeat(4.2, 20).ToArray());
        Assert.Equal("constant", result.Surrogate!.Kind);
        Assert.Equal(1, result.Surrogate.Check.CvR2);
        Assert.All(result.Surrogate.Predict(ModelingFixtures.Coded(design.Points)).Mean, v => Assert.Equal(4.2, v));
    }

    [Fact]
    public void Progress_is_reported_to_the_end_and_the_same_seed_gives_the_same_choice()
    {
        var design = ModelingFixtures.Designs.Design("Branin", 20);
        var reports = new List<SurrogateFitProgress>();
        var progress = new Collect(reports);
        var a = SurrogateSelection.Fit(ModelingFixtures.UnitSpace(2), ModelingFixtures.Coded(design.Points), design.Values, progress: progress);
        var b = SurrogateSelection.Fit(ModelingFixtures.UnitSpace(2), ModelingFixtures.Coded(design.Points), design.Values);
        Assert.NotEmpty(reports);
        Assert.Equal(reports[^1].Total, reports[^1].Completed);
        Assert.True(reports.Zip(reports.Skip(1), (p, q) => q.Completed > p.Completed).All(v => v));
        Assert.Equal(a.Surrogate!.Description, b.Surrogate!.Description);
        Assert.Equal(a.Surrogate.Check.CvRmse, b.Surrogate.Check.CvRmse);
    }

    [Fact]
    public void Cancellation_stops_a_selection()
    {
        var design = ModelingFixtures.Designs.Design("Borehole", 80);
        using var cancelled = new CancellationTokenSource();
        cancelled.Cancel();
        Assert.ThrowsAny<OperationCanceledException>(() => SurrogateSelection.Fit(ModelingFixtures.UnitSpace(8),
            ModelingFixtures.Coded(design.Points), design.Values, cancellation: cancelled.Token));
    }

    [Fact]
    public void A_study_with_a_categorical_factor_is_fitted_through_the_contract()
    {
        // Heat-sink scenario: thermal resistance falls with fin height, differs by alloy (invented demo-style data).
        var space = FactorSpace.Create([new FactorSpec("fin_height", Low: 20, High: 60, Unit: "mm"),
            new FactorSpec("alloy", FactorKind.Categorical, Levels: ["6063", "1050", "copper"])]).Value!;
        var rows = new List<double[]>();
        var y = new List<double>();
        for (var i = 0; i < 7; i++)
            for (var level = 0; level < 3; level++)
            {
                var h = -1 + 2.0 * i / 6;
                rows.Add([h, -1 + level]);
                y.Add(0.9 - 0.3 * h + 0.05 * h * h - 0.08 * level);
            }
        IResponseSurrogate surrogate = SurrogateSelection.Fit(space, Matrix<double>.Build.DenseOfRowArrays(rows), y).Surrogate!;
        var p = surrogate.Predict(Matrix<double>.Build.DenseOfRowArrays([0.5, 1], [0.5, -1]));
        Assert.Equal(0.9 - 0.15 + 0.0125 - 0.16, p.Mean[0], 1e-4);
        Assert.Equal(0.9 - 0.15 + 0.0125, p.Mean[1], 1e-4);
    }

    private sealed class Collect(List<SurrogateFitProgress> into) : IProgress<SurrogateFitProgress>
    {
        public void Report(SurrogateFitProgress value) => into.Add(value);
    }
}
