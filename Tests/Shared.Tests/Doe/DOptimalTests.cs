using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Doe;

public sealed class DOptimalTests
{
    [Fact]
    public void Six_runs_for_a_quadratic_model_in_two_factors_match_a_brute_force_search_of_the_3x3_grid()
    {
        // Check by exhaustive enumeration of all C(9, 6) = 84 subsets of the 3 × 3 candidate grid: the best
        // |X'X| for 1, x1, x2, x1·x2, x1², x2² (the D-optimal exact design; Atkinson, Donev & Tobias 2007, ch. 11).
        var space = DoeFixtures.Unit(2);
        var model = new DesignModel(space, DesignModelKind.Quadratic);
        var grid = (from a in new[] { -1.0, 0, 1 } from b in new[] { -1.0, 0, 1 } select new[] { a, b }).ToArray();
        var best = double.NegativeInfinity;
        foreach (var subset in Subsets(9, 6))
            best = Math.Max(best, Determinant(model, [.. subset.Select(i => grid[i])]));

        foreach (var seed in new[] { 1, 2, 3 })
        {
            var built = DesignBuilder.Build(space, new DesignSpec(DesignMethod.DOptimal, Runs: 6, Model: "quadratic", Seed: seed)).Value!;
            var rows = Enumerable.Range(0, 6).Select(i => built.Matrix.Coded.Row(i).ToArray()).ToArray();
            Assert.All(rows, r => Assert.All(r, v => Assert.Contains(v, new[] { -1.0, 0, 1 })));
            Assert.Equal(6, rows.Select(r => string.Join(",", r)).Distinct().Count());
            Assert.Equal(best, Determinant(model, rows), 9);
        }
        Assert.True(best > 0);
    }

    [Fact]
    public void Constraints_integer_and_categorical_factors_are_honoured()
    {
        var space = FactorSpace.Create(
        [
            new FactorSpec("fin_thickness", Low: 0.8, High: 2.5),
            new FactorSpec("fin_count", FactorKind.Integer, 10, 40),
            new FactorSpec("base_width", Low: 40, High: 120),
            new FactorSpec("alloy", FactorKind.Categorical, Levels: ["6063", "copper", "1050"]),
        ]).Value!;
        var spec = new DesignSpec(DesignMethod.DOptimal, Runs: 20, Model: "interactions",
            Constraints: ["fin_thickness * fin_count <= 0.6 * base_width"]);
        var built = DesignBuilder.Build(space, spec).Value!;
        Assert.Equal(20, built.Matrix.RunCount);
        Assert.Empty(built.ConstraintViolations);
        Assert.All(built.Matrix.NaturalRows(), r =>
        {
            Assert.True(r[0] * r[1] <= 0.6 * r[2] + 1e-9, $"{r[0]} · {r[1]} > 0.6 · {r[2]}");
            Assert.Equal(Math.Round(r[1]), r[1]);
            Assert.Contains(r[3], new[] { 0.0, 1, 2 });
        });
        Assert.Equal(3, built.Matrix.NaturalRows().Select(r => r[3]).Distinct().Count());
        var metrics = DesignMetrics.Evaluate(built.Matrix, DesignModelKind.Interactions);
        Assert.NotNull(metrics.DEfficiency);
    }

    [Fact]
    public void Fewer_runs_than_model_terms_is_a_field_error_and_the_default_leaves_room()
    {
        var space = DoeFixtures.Unit(3);
        var refused = DesignBuilder.Build(space, new DesignSpec(DesignMethod.DOptimal, Runs: 9, Model: "quadratic"));
        Assert.Equal(OutcomeKind.Invalid, refused.Kind);
        Assert.Contains("10 terms", refused.Errors!["design.runs"][0], StringComparison.Ordinal);
        Assert.Equal(15, DesignBuilder.Build(space, new DesignSpec(DesignMethod.DOptimal)).Value!.Matrix.RunCount);
        Assert.Equal(OutcomeKind.Invalid, DesignBuilder.Build(space, new DesignSpec(DesignMethod.DOptimal, Model: "cubic")).Kind);
        var twoLevels = DesignBuilder.Build(space, new DesignSpec(DesignMethod.DOptimal, Levels: [2]));
        Assert.Contains("at least three levels of 'x1'", twoLevels.Errors!["design.levels"][0], StringComparison.Ordinal);
        Assert.True(DesignBuilder.Build(space, new DesignSpec(DesignMethod.DOptimal, Runs: 8, Levels: [2], Model: "interactions")).IsOk);
    }

    [Fact]
    public void Asking_for_more_runs_than_distinct_feasible_settings_is_refused()
    {
        var refused = DesignBuilder.Build(DoeFixtures.Unit(2), new DesignSpec(DesignMethod.DOptimal, Runs: 10, Model: "linear"));
        Assert.Equal(OutcomeKind.Unprocessable, refused.Kind);
        Assert.Contains("Only 9 distinct combinations", refused.Errors!["design.runs"][0], StringComparison.Ordinal);
    }

    private static double Determinant(DesignModel model, double[][] rows) =>
        model.ModelMatrix(Matrix<double>.Build.DenseOfRowArrays(rows)).TransposeThisAndMultiply(model.ModelMatrix(Matrix<double>.Build.DenseOfRowArrays(rows))).Determinant();

    private static IEnumerable<int[]> Subsets(int n, int size)
    {
        for (var mask = 0; mask < 1 << n; mask++)
            if (System.Numerics.BitOperations.PopCount((uint)mask) == size)
                yield return [.. Enumerable.Range(0, n).Where(i => (mask & (1 << i)) != 0)];
    }
}
