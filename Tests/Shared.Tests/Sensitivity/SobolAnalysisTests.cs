using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Doe;
using Runfold.Shared.Modeling.GaussianProcess;
using Runfold.Shared.Modeling.Polynomial;
using Runfold.Shared.Sensitivity;
using Runfold.Shared.Studies;
using Runfold.TestFunctions;

namespace Runfold.Shared.Tests.Sensitivity;

public sealed class SobolAnalysisTests
{
    private static readonly FactorSpace IshigamiSpace = FunctionSurrogate.Continuous(
        ("x1", -Math.PI, Math.PI), ("x2", -Math.PI, Math.PI), ("x3", -Math.PI, Math.PI));

    [Fact]
    public void Ishigami_indices_of_the_true_function_are_within_0_02_of_the_analytic_values()
    {
        // Source: Ishigami & Homma (1990), a = 7, b = 0.1; closed forms as in Saltelli et al. (2008) and VLSE:
        // S = (0.3139, 0.4424, 0), T = (0.5576, 0.4424, 0.2437).
        var ishigami = PublishedTestFunctions.Ishigami();
        var (first, total) = PublishedTestFunctions.IshigamiIndices();
        var indices = SobolAnalysis.Estimate(new FunctionSurrogate(IshigamiSpace, ishigami.Evaluate),
            new SobolOptions { BaseSamples = 1 << 14, BootstrapResamples = 200 });
        Assert.Equal(1 << 14, indices.BaseSamples);
        Assert.Equal((1 << 14) * 5, indices.Evaluations);
        for (var i = 0; i < 3; i++)
        {
            var factor = indices.Factors[i];
            Assert.True(Math.Abs(factor.FirstOrder - first[i]) <= 0.02, $"S{i + 1}: {factor.FirstOrder:F4} vs analytic {first[i]:F4}");
            Assert.True(Math.Abs(factor.Total - total[i]) <= 0.02, $"T{i + 1}: {factor.Total:F4} vs analytic {total[i]:F4}");
            Assert.True(factor.FirstOrderLow <= factor.FirstOrder && factor.FirstOrder <= factor.FirstOrderHigh);
            Assert.True(factor.TotalLow <= factor.Total && factor.Total <= factor.TotalHigh);
            // The 95 % intervals are a few hundredths wide at this N and cover the analytic values (within a margin
            // of 0.01 for the bias of the estimators).
            Assert.InRange(first[i], factor.FirstOrderLow - 0.01, factor.FirstOrderHigh + 0.01);
            Assert.InRange(total[i], factor.TotalLow - 0.01, factor.TotalHigh + 0.01);
            Assert.True(factor.TotalHigh - factor.TotalLow < 0.06, $"T{i + 1} interval {factor.TotalLow:F3}…{factor.TotalHigh:F3} is too wide");
        }
        Assert.Equal([0, 1, 2], indices.Ranking);
    }

    [Fact]
    public void Ishigami_indices_of_a_Gaussian_process_on_200_runs_are_within_0_05_of_the_analytic_values()
    {
        // Source: Ishigami & Homma (1990) analytic indices (a = 7, b = 0.1); the surrogate is a Matérn 5/2 Gaussian
        // process fitted to a 200-run maximin Latin hypercube of the true function.
        var ishigami = PublishedTestFunctions.Ishigami();
        var (first, total) = PublishedTestFunctions.IshigamiIndices();
        var unit = LatinHypercube.Maximin(200, 3, seed: 11);
        var coded = Matrix<double>.Build.Dense(200, 3, (i, j) => 2 * unit[i, j] - 1);
        var y = Enumerable.Range(0, 200).Select(i => ishigami.Evaluate(ishigami.FromCoded(coded.Row(i).ToArray()))).ToArray();
        var gp = GaussianProcessModel.Fit(IshigamiSpace, coded, y, new GaussianProcessOptions { Restarts = 1 });
        var indices = SobolAnalysis.Estimate(gp, new SobolOptions { BaseSamples = 1 << 13 });
        for (var i = 0; i < 3; i++)
        {
            Assert.True(Math.Abs(indices.Factors[i].FirstOrder - first[i]) <= 0.05, $"S{i + 1}: {indices.Factors[i].FirstOrder:F4} vs {first[i]:F4}");
            Assert.True(Math.Abs(indices.Factors[i].Total - total[i]) <= 0.05, $"T{i + 1}: {indices.Factors[i].Total:F4} vs {total[i]:F4}");
        }
    }

    [Fact]
    public void Analytic_indices_of_a_polynomial_equal_the_hand_derivation()
    {
        // f = x1 + 2·x2 + x1·x2 on uniform [−1, 1]²: Var = 1/3 + 4/3 + 1/9 = 16/9, so S1 = 3/16, S2 = 12/16, T1 = 4/16,
        // T2 = 13/16 (Sobol' 1993 decomposition, worked by hand: common practice for a check of this kind).
        var space = FunctionSurrogate.Continuous(("x1", -1, 1), ("x2", -1, 1));
        var model = FitExact(space, PolynomialFamily.Interaction, x => x[0] + 2 * x[1] + x[0] * x[1]);
        var exact = PolynomialSobol.Analytic(model);
        Assert.Equal(3.0 / 16, exact.FirstOrder[0], 10);
        Assert.Equal(12.0 / 16, exact.FirstOrder[1], 10);
        Assert.Equal(4.0 / 16, exact.Total[0], 10);
        Assert.Equal(13.0 / 16, exact.Total[1], 10);
        Assert.Equal(16.0 / 9, exact.Variance, 10);
        Assert.Equal(0, exact.Mean, 10);
    }

    [Fact]
    public void Monte_Carlo_and_analytic_indices_of_a_quadratic_with_integer_and_categorical_factors_agree()
    {
        // The same quadratic response surface both ways: the analytic decomposition must agree with the sampling
        // estimate within 0.01 (2^14 base samples), including the discrete distributions of integer and
        // categorical factors, which both methods treat as equally likely values.
        var space = FactorSpace.Create([
            new FactorSpec("height", Low: 20, High: 60),
            new FactorSpec("count", FactorKind.Integer, 10, 14),
            new FactorSpec("alloy", FactorKind.Categorical, Levels: ["aluminium", "copper", "magnesium"]),
            new FactorSpec("velocity", Low: 1, High: 6),
        ]).Value!;
        double Truth(double[] x) => 0.05 * x[0] + 0.8 * x[1] + (x[2] == 1 ? 3 : x[2] == 2 ? -1 : 0) + 2 * x[3]
                                    - 0.15 * x[3] * x[3] + 0.01 * x[0] * x[3] + 0.2 * x[1] * (x[2] == 1 ? 1 : 0);
        var model = FitExact(space, PolynomialFamily.Quadratic, Truth);
        var exact = PolynomialSobol.Analytic(model);
        var sampled = SobolAnalysis.Estimate(model, new SobolOptions { BaseSamples = 1 << 14, BootstrapResamples = 0 });
        for (var i = 0; i < space.Count; i++)
        {
            Assert.True(Math.Abs(sampled.Factors[i].FirstOrder - exact.FirstOrder[i]) <= 0.01,
                $"{space[i].Name} first order: sampled {sampled.Factors[i].FirstOrder:F4}, analytic {exact.FirstOrder[i]:F4}");
            Assert.True(Math.Abs(sampled.Factors[i].Total - exact.Total[i]) <= 0.01,
                $"{space[i].Name} total: sampled {sampled.Factors[i].Total:F4}, analytic {exact.Total[i]:F4}");
        }
        Assert.Equal(exact.Variance, sampled.Variance, exact.Variance * 0.01);
        Assert.Equal(exact.Mean, sampled.Mean, Math.Sqrt(exact.Variance) * 0.01);
    }

    [Fact]
    public void Directions_follow_the_sign_of_the_mean_derivative()
    {
        var space = FunctionSurrogate.Continuous(("up", 0, 1), ("down", 0, 1), ("bowl", -1, 1), ("idle", 0, 1), ("flip", -1, 1));
        // "flip" changes sign with "up": its derivative is positive for half the box and negative for the other half.
        var surrogate = new FunctionSurrogate(space, x => 3 * x[0] - 2 * x[1] + x[2] * x[2] + 0 * x[3] + x[4] * (x[0] - 0.5));
        var indices = SobolAnalysis.Estimate(surrogate, new SobolOptions { BaseSamples = 2048, BootstrapResamples = 20 });
        Assert.Equal(EffectDirection.Raises, indices.Factors[0].Direction);
        Assert.Equal(EffectDirection.Lowers, indices.Factors[1].Direction);
        Assert.Equal(EffectDirection.Mixed, indices.Factors[2].Direction);
        Assert.Equal(EffectDirection.None, indices.Factors[3].Direction);
        Assert.Equal(EffectDirection.Mixed, indices.Factors[4].Direction);
        // Mean slope per coded unit: 3 × half the range of "up" (0.5) and −2 × 0.5.
        Assert.Equal(1.5, indices.Factors[0].MeanSlope, 6);
        Assert.Equal(-1.0, indices.Factors[1].MeanSlope, 6);
        Assert.Equal(0, indices.Factors[3].Total, 12);
    }

    [Fact]
    public void Same_seed_gives_the_same_indices_and_a_time_budget_picks_a_power_of_two()
    {
        var ishigami = PublishedTestFunctions.Ishigami();
        var surrogate = new FunctionSurrogate(IshigamiSpace, ishigami.Evaluate);
        var one = SobolAnalysis.Estimate(surrogate, new SobolOptions { BaseSamples = 1024, Seed = 7 });
        var two = SobolAnalysis.Estimate(surrogate, new SobolOptions { BaseSamples = 1024, Seed = 7 });
        Assert.Equal(one, two with { Factors = two.Factors }, new IndicesComparer());

        var budgeted = SobolAnalysis.Estimate(surrogate, new SobolOptions { TimeBudget = TimeSpan.FromMilliseconds(150), MinBaseSamples = 256, MaxBaseSamples = 1 << 14 });
        Assert.InRange(budgeted.BaseSamples, 256, 1 << 14);
        Assert.Equal(0, budgeted.BaseSamples & (budgeted.BaseSamples - 1));
        Assert.Equal(budgeted.BaseSamples * 5, budgeted.Evaluations);
    }

    [Fact]
    public void A_constant_response_has_no_sensitivity_and_cancellation_stops_the_estimate()
    {
        var space = FunctionSurrogate.Continuous(("a", 0, 1), ("b", 0, 1));
        var flat = SobolAnalysis.Estimate(new FunctionSurrogate(space, _ => 4.2), new SobolOptions { BaseSamples = 256 });
        Assert.All(flat.Factors, f =>
        {
            Assert.Equal(0, f.FirstOrder);
            Assert.Equal(0, f.Total);
            Assert.Equal(EffectDirection.None, f.Direction);
        });
        using var cancelled = new CancellationTokenSource();
        cancelled.Cancel();
        Assert.ThrowsAny<OperationCanceledException>(() =>
            SobolAnalysis.Estimate(new FunctionSurrogate(space, x => x[0]), SobolOptions.Default, cancelled.Token));
    }

    /// <summary>A polynomial fitted without term selection to exact values of a function on a dense grid of the box,
    /// so its coefficients are the function's own.</summary>
    internal static PolynomialSurrogate FitExact(FactorSpace space, PolynomialFamily family, Func<double[], double> truth)
    {
        var unit = SobolSequence.Generate(256, space.Count, scramble: true, seed: 3);
        var coded = UnitCube.ToCoded(space, unit);
        var y = Enumerable.Range(0, coded.RowCount).Select(i => truth(space.FromCoded(coded.Row(i).ToArray()))).ToArray();
        return PolynomialModel.Fit(space, coded, y, new PolynomialOptions { Family = family, Selection = TermSelection.None }).Model!;
    }

    private sealed class IndicesComparer : IEqualityComparer<SobolIndices>
    {
        public bool Equals(SobolIndices? x, SobolIndices? y) =>
            x is not null && y is not null && x.BaseSamples == y.BaseSamples && x.Variance == y.Variance && x.Factors.SequenceEqual(y.Factors);

        public int GetHashCode(SobolIndices obj) => obj.BaseSamples;
    }
}
