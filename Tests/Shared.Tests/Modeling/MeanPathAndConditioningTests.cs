using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Doe;
using Runfold.Shared.Modeling;
using Runfold.Shared.Modeling.GaussianProcess;
using Runfold.Shared.Modeling.Selection;
using Runfold.Shared.Studies;
using Runfold.TestFunctions;

namespace Runfold.Shared.Tests.Modeling;

public sealed class MeanPathAndConditioningTests
{
    private static readonly FactorSpace MixedSpace = FactorSpace.Create([
        new FactorSpec("a", Low: 0, High: 1),
        new FactorSpec("n", FactorKind.Integer, 1, 6),
        new FactorSpec("c", FactorKind.Categorical, Levels: ["p", "q", "r"]),
        new FactorSpec("b", Low: 1, High: 100, Scale: FactorScale.Log),
    ]).Value!;

    private static (Matrix<double> Coded, double[] Y) Runs(int n, int seed)
    {
        var coded = UnitCube.ToCoded(MixedSpace, LatinHypercube.Random(n, MixedSpace.Count, seed));
        var y = Enumerable.Range(0, n).Select(i =>
        {
            var x = MixedSpace.FromCoded(coded.Row(i).ToArray());
            return Math.Sin(3 * x[0]) + 0.3 * x[1] + (x[2] == 1 ? 1.5 : 0) + Math.Log10(x[3]);
        }).ToArray();
        return (coded, y);
    }

    [Theory]
    [InlineData(CovarianceKernel.SquaredExponential, GaussianProcessTrend.None)]
    [InlineData(CovarianceKernel.Matern32, GaussianProcessTrend.Constant)]
    [InlineData(CovarianceKernel.Matern52, GaussianProcessTrend.Linear)]
    public void The_vectorised_mean_equals_the_full_prediction(CovarianceKernel kernel, GaussianProcessTrend trend)
    {
        var (coded, y) = Runs(60, 5);
        var gp = GaussianProcessModel.Fit(MixedSpace, coded, y, new GaussianProcessOptions { Kernel = kernel, Trend = trend, Restarts = 1 });
        // Enough points for the threaded path (points × runs above its threshold) and a partial last block.
        var test = UnitCube.ToCoded(MixedSpace, SobolSequence.Generate(9_000, MixedSpace.Count, scramble: true, seed: 2));
        var full = gp.Predict(test).Mean;
        var fast = ((IResponseSurrogate)gp).PredictMean(test);
        // Both paths sum Σ r(x, xᵢ)αᵢ in different orders (and the vector exponential is within 2 ulp of Math.Exp), so
        // they agree to the rounding of that sum, about ε·Σ|αᵢ|: large for an ill-conditioned squared-exponential
        // covariance, whose weights α reach 1e5 and more.
        var rounding = 64 * 2.2e-16 * gp.Solution!.Alpha.Sum(Math.Abs) + 1e-13;
        var scale = gp.Standardization.Scale;
        for (var i = 0; i < full.Length; i++)
            Assert.True(Math.Abs(full[i] - fast[i]) <= rounding * scale, $"point {i}: {full[i]:R} vs {fast[i]:R} (allowed {rounding * scale:G3})");
    }

    [Fact]
    public void A_believed_run_keeps_the_mean_and_removes_the_uncertainty_there()
    {
        // Kriging believer (Ginsbourger, Le Riche & Carraro 2010): the fantasised value is the predicted mean, so the
        // posterior mean is unchanged everywhere (fixed hyper-parameters) and the variance at the new run drops to the
        // nugget's level.
        var (coded, y) = Runs(40, 9);
        var gp = GaussianProcessModel.Fit(MixedSpace, coded, y, new GaussianProcessOptions { Restarts = 1 });
        var point = Matrix<double>.Build.DenseOfRowArrays([0.1, MixedSpace[1].ToCoded(3), MixedSpace[2].ToCoded(2), -0.4]);
        var before = gp.Predict(point);
        var believed = gp.Condition(point, before.Mean)!;
        var after = believed.Predict(point);
        Assert.Equal(before.Mean[0], after.Mean[0], 8);
        // What is left is rounding of 1 − k*ᵀK⁻¹k* (about √ε of the signal's scale), far below the sd before.
        Assert.True(after.StandardDeviation![0] < 0.05 * before.StandardDeviation![0], $"sd {after.StandardDeviation[0]:G3} vs {before.StandardDeviation[0]:G3}");
        Assert.True(after.StandardDeviation[0] < 1e-4 * gp.Standardization.Scale);

        var probe = UnitCube.ToCoded(MixedSpace, SobolSequence.Generate(200, MixedSpace.Count, scramble: true, seed: 4));
        var meanBefore = gp.Predict(probe);
        var meanAfter = believed.Predict(probe);
        for (var i = 0; i < 200; i++)
        {
            Assert.Equal(meanBefore.Mean[i], meanAfter.Mean[i], 6);
            Assert.True(meanAfter.StandardDeviation![i] <= meanBefore.StandardDeviation![i] * (1 + 1e-9));
        }

        var lied = gp.Condition(point, [before.Mean[0] - 5])!;
        // A constant liar moves the mean to the lie (up to the rounding of a covariance this smooth function makes
        // nearly singular: its length scales reach the upper bound).
        Assert.Equal(before.Mean[0] - 5, lied.Predict(point).Mean[0], 0.01);
    }

    [Fact]
    public void Selected_surrogates_pass_conditioning_through_log_and_ensemble_models()
    {
        // Positive values spanning decades make the selection also fit ln y.
        var branin = PublishedTestFunctions.Branin;
        var space = FactorSpace.Create([new FactorSpec("x1", Low: -5, High: 10), new FactorSpec("x2", Low: 0, High: 15)]).Value!;
        var coded = UnitCube.ToCoded(space, LatinHypercube.Maximin(24, 2, seed: 3));
        var y = Enumerable.Range(0, 24).Select(i => branin.Evaluate(space.FromCoded(coded.Row(i).ToArray()))).ToArray();
        var fitted = SurrogateSelection.Fit(space, coded, y).Surrogate!;
        var point = Matrix<double>.Build.DenseOfRowArrays([0.3, -0.2]);
        var prediction = fitted.Predict(point);
        Assert.Equal(prediction.Mean, fitted.PredictMean(point), new Tolerance(1e-9));
        var conditioned = fitted.Condition(point, prediction.Mean);
        if (fitted.Model is LogResponseModel or EnsembleModel or GaussianProcessSurrogate)
        {
            Assert.NotNull(conditioned);
            Assert.Equal(prediction.Mean[0], conditioned!.PredictMean(point)[0], 6);
        }
    }

    private sealed class Tolerance(double relative) : IEqualityComparer<double>
    {
        public bool Equals(double x, double y) => Math.Abs(x - y) <= relative * (1 + Math.Abs(x));

        public int GetHashCode(double obj) => 0;
    }
}
