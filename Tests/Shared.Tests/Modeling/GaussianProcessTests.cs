using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Modeling.GaussianProcess;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Modeling;

public sealed class GaussianProcessTests
{
    private sealed record FixedCase(string Case, string Function, string Kernel, double[] LengthScales, double SignalVariance,
        double NoiseVariance, double[][] Train, double[] Values, double[][] Test, double[] Mean, double[] Std, double LogMarginalLikelihood);

    private sealed record FixedFile(FixedCase[] Cases);

    private sealed record MaximumLikelihoodCase(string Function, int Runs, int Seed, string Kernel, int Restarts,
        double SklearnHoldoutRmse, string SklearnKernel);

    private sealed record MaximumLikelihoodFile(MaximumLikelihoodCase[] Cases);

    private static CovarianceKernel KernelOf(string name) => name switch
    {
        "squaredExponential" => CovarianceKernel.SquaredExponential,
        "matern32" => CovarianceKernel.Matern32,
        _ => CovarianceKernel.Matern52,
    };

    private static void Relative(double expected, double actual, double tolerance, string what)
    {
        var scale = Math.Max(Math.Abs(expected), 1e-12);
        Assert.True(Math.Abs(actual - expected) <= tolerance * scale, $"{what}: expected {expected:R}, got {actual:R}");
    }

    [Fact]
    public void Mean_sd_and_log_likelihood_equal_scikit_learn_at_fixed_hyperparameters()
    {
        // Source: scikit-learn 1.2.1 GaussianProcessRegressor(optimizer=None, normalize_y=True), fixture
        // gp_fixed_hyperparameters.json from make_modeling_fixtures.py; zero-mean trend as scikit-learn has.
        foreach (var c in ModelingFixtures.Load<FixedFile>("gp_fixed_hyperparameters.json").Cases)
        {
            var space = ModelingFixtures.UnitSpace(c.LengthScales.Length);
            var options = new GaussianProcessOptions { Kernel = KernelOf(c.Kernel), Trend = GaussianProcessTrend.None };
            var model = GaussianProcessModel.FitWith(space, ModelingFixtures.Matrix(c.Train), c.Values, options,
                new GaussianProcessHyperparameters(c.LengthScales, c.SignalVariance, c.NoiseVariance));
            var prediction = model.Predict(ModelingFixtures.Matrix(c.Test));
            for (var i = 0; i < c.Mean.Length; i++)
            {
                Relative(c.Mean[i], prediction.Mean[i], 1e-8, $"{c.Case} mean {i}");
                Relative(c.Std[i], prediction.StandardDeviation![i], 1e-8, $"{c.Case} sd {i}");
            }
            Relative(c.LogMarginalLikelihood, model.LogMarginalLikelihood, 1e-8, $"{c.Case} log marginal likelihood");
        }
    }

    [Fact]
    public void Maximum_likelihood_predicts_the_holdout_no_worse_than_scikit_learn_with_five_restarts()
    {
        // Source: scikit-learn 1.2.1 GaussianProcessRegressor(n_restarts_optimizer=5) holdout RMSE on the same
        // Latin hypercube designs and 2,000 Sobol' points (fixture gp_max_likelihood.json); test functions from VLSE.
        // Same kernel, same number of starts, Runfold's default constant trend and nugget. Threshold: each case within
        // 2.5 % of scikit-learn's RMSE, and strictly better over all cases (geometric mean of the ratios below 1).
        // Why a margin per case: both searches reach the same likelihood optimum (length scales agree to about three
        // digits), and at that optimum the two models still differ in their mean (generalised least squares here,
        // the sample mean there) and in the nugget (relative 1e-12 here, absolute alpha 1e-8 there); on the smooth
        // Borehole function these shift the holdout RMSE by up to about 2 % either way, with no change of likelihood.
        var designs = ModelingFixtures.Designs;
        var logRatios = new List<double>();
        foreach (var c in ModelingFixtures.Load<MaximumLikelihoodFile>("gp_max_likelihood.json").Cases)
        {
            var function = ModelingFixtures.Function(c.Function);
            var design = designs.Design(c.Function, c.Runs);
            var holdout = designs.Holdout[function.Dimension.ToString(System.Globalization.CultureInfo.InvariantCulture)];
            var model = GaussianProcessModel.Fit(ModelingFixtures.UnitSpace(function.Dimension), ModelingFixtures.Coded(design.Points),
                ModelingFixtures.Evaluate(function, design.Points), new GaussianProcessOptions { Kernel = KernelOf(c.Kernel), Restarts = c.Restarts });
            var truth = ModelingFixtures.Evaluate(function, holdout);
            var predicted = model.Predict(ModelingFixtures.Coded(holdout)).Mean;
            var rmse = Math.Sqrt(truth.Zip(predicted, (t, p) => (t - p) * (t - p)).Average());
            Assert.True(rmse <= c.SklearnHoldoutRmse * 1.025,
                $"{c.Function} {c.Kernel} n={c.Runs}: holdout RMSE {rmse:G5} is worse than scikit-learn's {c.SklearnHoldoutRmse:G5} ({c.SklearnKernel}).");
            logRatios.Add(Math.Log(rmse / c.SklearnHoldoutRmse));
        }
        Assert.True(logRatios.Average() < 0, $"Geometric mean RMSE ratio {Math.Exp(logRatios.Average()):F4} is not below 1.");
    }

    [Theory]
    [InlineData(CovarianceKernel.SquaredExponential, GaussianProcessTrend.Constant, false, false)]
    [InlineData(CovarianceKernel.Matern32, GaussianProcessTrend.Linear, true, false)]
    [InlineData(CovarianceKernel.Matern52, GaussianProcessTrend.Linear, true, true)]
    [InlineData(CovarianceKernel.Matern52, GaussianProcessTrend.None, false, false)]
    public void The_analytic_gradient_of_the_likelihood_matches_finite_differences(CovarianceKernel kernel, GaussianProcessTrend trend, bool noisy, bool restricted)
    {
        // Central differences with step 1e-5 in log parameters (common practice for checking analytic gradients).
        var design = ModelingFixtures.Designs.Design("Hartmann-6", 60);
        var space = ModelingFixtures.UnitSpace(6);
        var x = ModelingFixtures.Coded(design.Points);
        var encoding = new Runfold.Shared.Modeling.FactorEncoding(space, dropFirstLevel: false);
        var basis = new Runfold.Shared.Modeling.TrendBasis(space, trend switch { GaussianProcessTrend.None => -1, GaussianProcessTrend.Constant => 0, _ => 1 });
        var std = Runfold.Shared.Modeling.Standardization.Of(design.Values);
        var likelihood = new GaussianProcessLikelihood(encoding.Encode(x), 6, [.. design.Values.Select(std.Apply)], basis.Evaluate(x), basis.Count, kernel);
        double[] theta = noisy ? [0.2, -0.5, 0.9, -0.4, 0.6, 0.1, Math.Log(1e-3)] : [0.2, -0.5, 0.9, -0.4, 0.6, 0.1];
        var gradient = new double[theta.Length];
        likelihood.NegativeLogLikelihood(theta, gradient, 1e-8, noisy, restricted);
        for (var k = 0; k < theta.Length; k++)
        {
            var plus = (double[])theta.Clone();
            var minus = (double[])theta.Clone();
            plus[k] += 1e-5;
            minus[k] -= 1e-5;
            var scratch = new double[theta.Length];
            var numeric = (likelihood.NegativeLogLikelihood(plus, scratch, 1e-8, noisy, restricted)
                - likelihood.NegativeLogLikelihood(minus, scratch, 1e-8, noisy, restricted)) / 2e-5;
            Assert.True(Math.Abs(numeric - gradient[k]) <= 1e-5 * Math.Max(1, Math.Abs(numeric)), $"θ{k}: analytic {gradient[k]:R}, numeric {numeric:R}");
        }
    }

    [Fact]
    public void The_stored_design_responses_are_the_published_functions()
    {
        // The fixture's responses (numpy) and PublishedTestFunctions (C#) are the same VLSE definitions.
        foreach (var d in ModelingFixtures.Designs.Designs)
        {
            var values = ModelingFixtures.Evaluate(ModelingFixtures.Function(d.Function), d.Points);
            for (var i = 0; i < values.Length; i++) Relative(d.Values[i], values[i], 1e-10, $"{d.Function} run {i}");
        }
    }

    [Theory]
    [InlineData(GaussianProcessTrend.Constant, false)]
    [InlineData(GaussianProcessTrend.Linear, false)]
    [InlineData(GaussianProcessTrend.Constant, true)]
    public void Closed_form_leave_one_out_equals_refitting_without_each_run(GaussianProcessTrend trend, bool noisy)
    {
        // Dubrule (1983): the closed form must equal brute-force refits at the same hyper-parameters.
        var design = ModelingFixtures.Designs.Design("Hartmann-6", 60);
        var x = ModelingFixtures.Coded(design.Points);
        var y = design.Values;
        var space = ModelingFixtures.UnitSpace(6);
        var options = new GaussianProcessOptions { Trend = trend, Noisy = noisy, Restarts = 1 };
        var fitted = GaussianProcessModel.Fit(space, x, y, options);
        var h = fitted.Hyperparameters;
        var closedForm = fitted.CrossValidation.Predicted;
        for (var i = 0; i < y.Length; i++)
        {
            var keep = Enumerable.Range(0, y.Length).Where(r => r != i).ToArray();
            var xi = Matrix<double>.Build.DenseOfRowVectors(keep.Select(x.Row));
            var refit = GaussianProcessModel.FitWith(space, xi, [.. keep.Select(r => y[r])], options, h with
            {
                // The refit standardises n − 1 values: carry the same variances over into its units.
                SignalVariance = h.SignalVariance * Square(fitted.Standardization.Scale / Scale(keep.Select(r => y[r]))),
                NoiseVariance = h.NoiseVariance * Square(fitted.Standardization.Scale / Scale(keep.Select(r => y[r]))),
            });
            var bruteForce = refit.Predict(x.SubMatrix(i, 1, 0, 6)).Mean[0];
            Relative(bruteForce, closedForm[i], 1e-7, $"run {i}");
        }
    }

    private static double Square(double v) => v * v;

    private static double Scale(IEnumerable<double> values) => Runfold.Shared.Modeling.Standardization.Of([.. values]).Scale;

    [Fact]
    public void Duplicate_runs_a_constant_response_and_tiny_ranges_give_finite_numbers()
    {
        var space = ModelingFixtures.UnitSpace(2);
        var x = Matrix<double>.Build.DenseOfRowArrays([-1, -1], [-1, -1], [0, 0.5], [1, -0.3], [0.2, 0.9], [0.2, 0.9], [0.7, 0.1]);
        var probe = Matrix<double>.Build.DenseOfRowArrays([0, 0], [-1, -1], [0.5, 0.5]);
        double[][] responses =
        [
            [1, 1.0000001, 2, 3, 4, 4, 5],               // duplicates with slightly different values
            [7, 7, 7, 7, 7, 7, 7],                       // constant
            [1e-15, 1e-15, 1.000001e-15, 1e-15, 1e-15, 1e-15, 1.000002e-15], // tiny range
            [1e9, 1e9, 1e9 + 1e-6, 1e9, 1e9, 1e9, 1e9],  // near-constant far from zero
        ];
        foreach (var y in responses)
            foreach (var kernel in Enum.GetValues<CovarianceKernel>())
                foreach (var noisy in new[] { false, true })
                {
                    var model = GaussianProcessModel.Fit(space, x, y, new GaussianProcessOptions { Kernel = kernel, Noisy = noisy, Restarts = 2 });
                    var p = model.Predict(probe);
                    Assert.All(p.Mean, v => Assert.True(double.IsFinite(v)));
                    Assert.All(p.StandardDeviation!, v => Assert.True(double.IsFinite(v) && v >= 0));
                    Assert.All(model.CrossValidation.Predicted, v => Assert.True(double.IsFinite(v)));
                }
    }

    [Fact]
    public void The_same_seed_gives_the_same_numbers()
    {
        var design = ModelingFixtures.Designs.Design("Branin", 20);
        var fit = () => GaussianProcessModel.Fit(ModelingFixtures.UnitSpace(2), ModelingFixtures.Coded(design.Points), design.Values,
            new GaussianProcessOptions { Seed = 42 });
        var a = fit();
        var b = fit();
        Assert.Equal(a.Hyperparameters.LengthScales, b.Hyperparameters.LengthScales);
        Assert.Equal(a.LogMarginalLikelihood, b.LogMarginalLikelihood);
    }

    [Fact]
    public void A_categorical_factor_is_encoded_one_hot_and_predicts_each_level()
    {
        var space = FactorSpace.Create([new FactorSpec("fin_height", Low: 20, High: 60),
            new FactorSpec("alloy", FactorKind.Categorical, Levels: ["6063", "1050", "copper"])]).Value!;
        var rows = new List<double[]>();
        var y = new List<double>();
        for (var i = 0; i < 8; i++)
            for (var level = 0; level < 3; level++)
            {
                var h = -1 + 2.0 * i / 7;
                rows.Add([h, -1 + level]);
                y.Add(Math.Sin(2 * h) + 3 * level);
            }
        var model = GaussianProcessModel.Fit(space, Matrix<double>.Build.DenseOfRowArrays(rows), y);
        Assert.Equal(["fin_height", "alloy[6063]", "alloy[1050]", "alloy[copper]"], model.ColumnNames);
        var p = model.Predict(Matrix<double>.Build.DenseOfRowArrays([0.1, -1], [0.1, 0], [0.1, 1]));
        for (var level = 0; level < 3; level++) Assert.Equal(Math.Sin(0.2) + 3 * level, p.Mean[level], 1);
    }

    [Fact]
    public void Cancellation_stops_the_likelihood_search()
    {
        var design = ModelingFixtures.Designs.Design("Borehole", 160);
        using var cancelled = new CancellationTokenSource();
        cancelled.Cancel();
        Assert.Throws<OperationCanceledException>(() => GaussianProcessModel.Fit(ModelingFixtures.UnitSpace(8),
            ModelingFixtures.Coded(design.Points), design.Values, cancellation: cancelled.Token));
    }
}
