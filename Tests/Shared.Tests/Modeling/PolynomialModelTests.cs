using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Modeling.Polynomial;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Modeling;

public sealed class PolynomialModelTests
{
    /// <summary>
    /// Montgomery, Design and Analysis of Experiments (5th ed., 2001), Example 11-2: central composite design in
    /// reaction time (80–90 min) and temperature (170–180 °F), five centre runs, axial runs at ±α, yield in %.
    /// Data and ANOVA as printed (reproduced in ReliaWiki "Central Composite Response Surface Method"). The table
    /// shows α as 1.414; the printed sums of squares and F values follow from the rotatable α = √2 exactly.
    /// </summary>
    private static (FactorSpace Space, Matrix<double> Coded, double[] Yield) MontgomeryExample()
    {
        var space = FactorSpace.Create([new FactorSpec("time", Low: 80, High: 90, Unit: "min"),
            new FactorSpec("temperature", Low: 170, High: 180, Unit: "°F")]).Value!;
        var a = Math.Sqrt(2);
        var coded = Matrix<double>.Build.DenseOfRowArrays(
            [-1, -1], [-1, 1], [1, -1], [1, 1], [0, 0], [0, 0], [0, 0], [0, 0], [0, 0],
            [a, 0], [-a, 0], [0, a], [0, -a]);
        double[] yield = [76.5, 77.0, 78.0, 79.5, 79.9, 80.3, 80.0, 79.7, 79.8, 78.4, 75.6, 78.5, 77.0];
        return (space, coded, yield);
    }

    [Fact]
    public void The_second_order_model_of_Montgomerys_example_has_the_printed_anova()
    {
        var (space, coded, yield) = MontgomeryExample();
        var model = PolynomialModel.Fit(space, coded, yield, new PolynomialOptions { Selection = TermSelection.None }).Model!;
        var rows = model.Anova.ToDictionary(r => r.Source);

        // Printed ANOVA (Montgomery 2001, Example 11-2; partial sums of squares).
        Assert.Equal(28.25, rows["Model"].SumOfSquares, 2);
        Assert.Equal(5, rows["Model"].DegreesOfFreedom);
        Assert.Equal(5.65, rows["Model"].MeanSquare, 2);
        Assert.Equal(79.85, rows["Model"].F!.Value, 2);
        Assert.True(rows["Model"].P < 0.0001);
        Assert.Equal(7.92, rows["time"].SumOfSquares, 2);
        Assert.Equal(111.93, rows["time"].F!.Value, 2);
        Assert.Equal(2.12, rows["temperature"].SumOfSquares, 2);
        Assert.Equal(30.01, rows["temperature"].F!.Value, 2);
        Assert.Equal(0.0009, rows["temperature"].P!.Value, 4);
        Assert.Equal(13.18, rows["time²"].SumOfSquares, 2);
        Assert.Equal(186.22, rows["time²"].F!.Value, 2);
        Assert.Equal(6.97, rows["temperature²"].SumOfSquares, 2);
        Assert.Equal(98.56, rows["temperature²"].F!.Value, 2);
        Assert.Equal(0.25, rows["time·temperature"].SumOfSquares, 2);
        Assert.Equal(3.53, rows["time·temperature"].F!.Value, 2);
        Assert.Equal(0.1022, rows["time·temperature"].P!.Value, 4);
        Assert.Equal(0.50, rows["Residual"].SumOfSquares, 2);
        Assert.Equal(7, rows["Residual"].DegreesOfFreedom);
        Assert.Equal(0.071, rows["Residual"].MeanSquare, 3);
        Assert.Equal(0.28, rows["Lack of fit"].SumOfSquares, 2);
        Assert.Equal(3, rows["Lack of fit"].DegreesOfFreedom);
        Assert.Equal(0.094, rows["Lack of fit"].MeanSquare, 3);
        Assert.Equal(1.78, rows["Lack of fit"].F!.Value, 2);
        Assert.Equal(0.2897, rows["Lack of fit"].P!.Value, 4);
        Assert.Equal(0.21, rows["Pure error"].SumOfSquares, 2);
        Assert.Equal(4, rows["Pure error"].DegreesOfFreedom);
        Assert.Equal(0.053, rows["Pure error"].MeanSquare, 3);
        Assert.Equal(12, rows["Total"].DegreesOfFreedom);
        Assert.Equal(28.74, rows["Total"].SumOfSquares, 2);
    }

    [Fact]
    public void The_coefficients_of_Montgomerys_example_give_the_printed_equation_in_natural_units()
    {
        // Montgomery (2001), Example 11-2, Table 11-7 (the fitted quadratic: coded estimates to two decimals with their
        // standard errors 0.12, 0.094, 0.094, 0.10, 0.10, 0.13), and the stationary-point passage that follows it, which
        // prints b = (0.995, 0.515) and B = [[−1.376, 0.1250], [0.1250, −1.001]] (so the interaction is 0.250). Read in
        // a public transcription of the chapter, not in the book itself.
        var (space, coded, yield) = MontgomeryExample();
        var model = PolynomialModel.Fit(space, coded, yield, new PolynomialOptions { Selection = TermSelection.None }).Model!;
        var c = model.Coefficients.ToDictionary(r => r.Term);
        Assert.Equal(79.94, c["intercept"].Estimate, 2);
        Assert.Equal(0.995, c["time"].Estimate, 3);
        Assert.Equal(0.515, c["temperature"].Estimate, 3);
        Assert.Equal(-1.376, c["time²"].Estimate, 3);
        Assert.Equal(-1.001, c["temperature²"].Estimate, 3);
        Assert.Equal(0.1250, c["time·temperature"].Estimate / 2, 4);
        Assert.Equal(0.12, c["intercept"].StandardError, 2);
        Assert.Equal(0.094, c["time"].StandardError, 3);
        Assert.Equal(0.094, c["temperature"].StandardError, 3);
        Assert.Equal(0.10, c["time²"].StandardError, 2);
        Assert.Equal(0.10, c["temperature²"].StandardError, 2);
        Assert.Equal(0.13, c["time·temperature"].StandardError, 2);
        Assert.Equal(c["time"].Estimate / c["time"].StandardError, c["time"].T, 10);

        // Printed equation in natural units (Table 11-7, the same transcription; ReliaWiki reproduces it too):
        // yield = −1430.52285 + 7.80749 time + 13.27053 temp − 0.05505 time² − 0.04005 temp² + 0.01 time·temp.
        // With x1 = (time − 85)/5 and x2 = (temp − 175)/5 the coded coefficients expand to these.
        double b0 = c["intercept"].Estimate, b1 = c["time"].Estimate, b2 = c["temperature"].Estimate;
        double b11 = c["time²"].Estimate, b22 = c["temperature²"].Estimate, b12 = c["time·temperature"].Estimate;
        Assert.Equal(-0.05505, b11 / 25, 5);
        Assert.Equal(-0.04005, b22 / 25, 5);
        Assert.Equal(0.01, b12 / 25, 5);
        Assert.Equal(7.80749, b1 / 5 - 2 * 85 * b11 / 25 - 175 * b12 / 25, 4);
        Assert.Equal(13.27053, b2 / 5 - 2 * 175 * b22 / 25 - 85 * b12 / 25, 4);
        Assert.Equal(-1430.52285, b0 - 85 * b1 / 5 - 175 * b2 / 5 + 85 * 85 * b11 / 25 + 175 * 175 * b22 / 25 + 85 * 175 * b12 / 25, 2);
    }

    [Fact]
    public void R_squared_statistics_follow_their_definitions()
    {
        var (space, coded, yield) = MontgomeryExample();
        var model = PolynomialModel.Fit(space, coded, yield, new PolynomialOptions { Selection = TermSelection.None }).Model!;
        var sse = model.Anova.Single(r => r.Source == "Residual").SumOfSquares;
        var sst = model.Anova.Single(r => r.Source == "Total").SumOfSquares;
        Assert.Equal(1 - sse / sst, model.RSquared, 12);
        Assert.Equal(1 - sse / 7 / (sst / 12), model.AdjustedRSquared, 12);
        // PRESS from the hat matrix equals refitting without each run.
        var press = 0.0;
        for (var i = 0; i < yield.Length; i++)
        {
            var keep = Enumerable.Range(0, yield.Length).Where(r => r != i).ToArray();
            var refit = PolynomialModel.Fit(space, Matrix<double>.Build.DenseOfRowVectors(keep.Select(coded.Row)), [.. keep.Select(r => yield[r])],
                new PolynomialOptions { Selection = TermSelection.None }).Model!;
            var e = yield[i] - refit.Predict(coded.SubMatrix(i, 1, 0, 2)).Mean[0];
            press += e * e;
        }
        Assert.Equal(press, model.Press, 9);
        Assert.Equal(1 - press / sst, model.PredictedRSquared, 9);
    }

    [Fact]
    public void Too_few_runs_for_the_terms_are_refused_and_the_next_simpler_model_is_tried()
    {
        var space = FactorSpace.Create([new FactorSpec("a", Low: 0, High: 1), new FactorSpec("b", Low: 0, High: 1), new FactorSpec("c", Low: 0, High: 1)]).Value!;
        var random = new Random(3);
        var coded = Matrix<double>.Build.Dense(8, 3, (_, _) => 2 * random.NextDouble() - 1);
        var y = Enumerable.Range(0, 8).Select(i => 1 + coded[i, 0] - 2 * coded[i, 1] + 0.5 * coded[i, 2] * coded[i, 2]).ToArray();
        var result = PolynomialModel.Fit(space, coded, y, new PolynomialOptions { Selection = TermSelection.None });
        Assert.Equal(PolynomialFamily.Interaction, result.Model!.Family); // 7 terms, 8 runs (tied with pure quadratic, tried first)
        Assert.Contains(result.Refusals, r => r.Contains("full quadratic model has 10 terms and needs at least 11 runs; there are 8", StringComparison.Ordinal));

        var tooFew = PolynomialModel.Fit(space, coded.SubMatrix(0, 3, 0, 3), y[..3]);
        Assert.False(tooFew.IsFitted);
        Assert.Equal(2, tooFew.RunsStillNeeded); // a linear model in 3 factors needs 5 runs
    }

    [Fact]
    public void Stepwise_selection_keeps_the_true_terms_of_a_sparse_quadratic()
    {
        // y = 3 + 2a − b + 1.5 ab + small deterministic wiggle: stepwise AICc should drop c and the squares.
        var space = FactorSpace.Create([new FactorSpec("a", Low: 0, High: 1), new FactorSpec("b", Low: 0, High: 1), new FactorSpec("c", Low: 0, High: 1)]).Value!;
        var design = ModelingFixtures.Designs.Design("Hartmann-6", 60);
        var coded = Matrix<double>.Build.Dense(30, 3, (i, j) => 2 * design.Points[i][j] - 1);
        var y = Enumerable.Range(0, 30).Select(i => 3 + 2 * coded[i, 0] - coded[i, 1] + 1.5 * coded[i, 0] * coded[i, 1] + 0.01 * Math.Sin(17.0 * i)).ToArray();
        foreach (var selection in new[] { TermSelection.StepwiseAicc, TermSelection.StepwisePress })
        {
            var model = PolynomialModel.Fit(space, coded, y, new PolynomialOptions { Selection = selection }).Model!;
            var names = model.Terms.Select(t => t.Name).ToHashSet();
            Assert.Superset(new HashSet<string> { "intercept", "a", "b", "a·b" }, names);
            Assert.True(model.Terms.Count <= 6, $"{selection} kept {string.Join(", ", names)}");
        }
    }

    [Fact]
    public void A_categorical_factor_enters_as_indicator_columns_with_the_first_level_as_baseline()
    {
        var space = FactorSpace.Create([new FactorSpec("fin_height", Low: 20, High: 60),
            new FactorSpec("alloy", FactorKind.Categorical, Levels: ["6063", "1050", "copper"])]).Value!;
        var rows = new List<double[]>();
        var y = new List<double>();
        foreach (var h in new[] { -1.0, -0.5, 0, 0.5, 1 })
            for (var level = 0; level < 3; level++)
            {
                rows.Add([h, -1 + level]);
                y.Add(2 + h + (level == 2 ? 0.7 : level == 1 ? -0.3 : 0));
            }
        var model = PolynomialModel.Fit(space, Matrix<double>.Build.DenseOfRowArrays(rows), y,
            new PolynomialOptions { Family = PolynomialFamily.Linear, Selection = TermSelection.None }).Model!;
        var c = model.Coefficients.ToDictionary(r => r.Term);
        Assert.Equal(-0.3, c["alloy[1050]"].Estimate, 10);
        Assert.Equal(0.7, c["alloy[copper]"].Estimate, 10);
        Assert.DoesNotContain(model.Terms, t => t.Name.Contains("6063", StringComparison.Ordinal));
    }
}
