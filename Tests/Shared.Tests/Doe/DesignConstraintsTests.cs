using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Doe;

public sealed class DesignConstraintsTests
{
    private const string FinBudget = "fin_thickness * fin_count <= 0.6 * base_width";

    [Fact]
    public void An_inequality_in_natural_units_is_checked_run_by_run()
    {
        var space = DoeFixtures.HeatSink(withBaseWidth: true);
        var constraints = DesignConstraints.Parse([FinBudget, "fin_height >= 2 * base_thickness + 5"], space).Value!;
        // fin_height, fin_thickness, fin_count, base_thickness, air_velocity, base_width
        Assert.True(constraints.IsFeasible([40, 1.0, 20, 5, 3, 40]));     // 20 ≤ 24; 40 ≥ 15
        Assert.False(constraints.IsFeasible([40, 2.0, 20, 5, 3, 40]));    // 40 > 24
        Assert.Equal([FinBudget], constraints.Violated([40, 2.0, 20, 5, 3, 40]));
        Assert.Equal(["fin_height >= 2 * base_thickness + 5"], constraints.Violated([20, 1.0, 10, 9, 3, 120]));
        Assert.True(constraints.IsFeasible([40, 1.2, 20, 5, 3, 40]));     // exactly on the boundary: 24 ≤ 24
    }

    [Fact]
    public void Functions_powers_and_unary_minus_are_supported()
    {
        var space = DoeFixtures.HeatSink(withBaseWidth: true);
        var constraints = DesignConstraints.Parse(["Sqrt(fin_height ** 2 + base_width ** 2) < Max(100, -air_velocity) + Pow(fin_count, 0.5)"], space).Value!;
        Assert.True(constraints.IsFeasible([30, 1, 16, 5, 3, 60]));   // 67.1 < 104
        Assert.False(constraints.IsFeasible([60, 1, 16, 5, 3, 120])); // 134.2 > 104
    }

    public static TheoryData<string, string> BadConstraints => new()
    {
        { "fin_thickness * fin_cuont <= 0.6 * base_width", "'fin_cuont' is not a factor of this study; the factors are fin_height" },
        { "fin_thickness * fin_count", "needs one comparison" },
        { "fin_thickness == 1", "is an equation" },
        { "fin_height ^ 2 <= 100", "write x ** 2 or Pow(x, 2)" },
        { "1 <= fin_height <= 50", "split a chain" },
        { "fin_thickness * <= 3", "could not be read" },
        { "Cbrt(fin_height) <= 3", "'Cbrt' is not available" },
        { "2 <= 3", "names no factor" },
        { "  ", "cannot be empty" },
    };

    [Theory]
    [MemberData(nameof(BadConstraints))]
    public void A_bad_constraint_is_refused_with_a_clear_sentence_naming_its_field(string text, string words)
    {
        var parsed = DesignConstraints.Parse(["fin_height <= 60", text], DoeFixtures.HeatSink(withBaseWidth: true));
        Assert.False(parsed.IsValid);
        var message = parsed.Errors.ToDictionary()["design.constraints[1]"][0];
        Assert.Contains(words, message, StringComparison.Ordinal);
    }

    [Fact]
    public void A_categorical_factor_cannot_appear_in_a_constraint()
    {
        var space = FactorSpace.Create([new FactorSpec("a", Low: 0, High: 1), new FactorSpec("alloy", FactorKind.Categorical, Levels: ["x", "y"])]).Value!;
        var parsed = DesignConstraints.Parse(["alloy <= 1"], space);
        Assert.Contains("'alloy' is categorical", parsed.Errors.ToDictionary()["design.constraints[0]"][0], StringComparison.Ordinal);
    }

    [Fact]
    public void An_empty_feasible_region_is_refused_as_unprocessable_for_every_method()
    {
        var space = DoeFixtures.HeatSink(withBaseWidth: true);
        foreach (var method in Enum.GetValues<DesignMethod>())
        {
            var refused = DesignBuilder.Build(space, new DesignSpec(method, Constraints: ["fin_height >= 2 * base_width"]));
            Assert.Equal(OutcomeKind.Unprocessable, refused.Kind);
            Assert.Contains("No run within the factor ranges satisfies all the constraints", refused.Errors!["design.constraints"][0], StringComparison.Ordinal);
        }
    }

    [Theory]
    [InlineData(DesignMethod.LatinHypercube, 30)]
    [InlineData(DesignMethod.Sobol, 32)]
    [InlineData(DesignMethod.DOptimal, 32)] // the quadratic model in six factors has 28 terms
    public void Space_filling_and_D_optimal_designs_honour_the_constraints(DesignMethod method, int runs)
    {
        var space = DoeFixtures.HeatSink(withBaseWidth: true);
        var built = DesignBuilder.Build(space, new DesignSpec(method, Runs: runs, Constraints: [FinBudget], Scramble: true)).Value!;
        Assert.Equal(runs, built.Matrix.RunCount);
        Assert.Empty(built.ConstraintViolations);
        Assert.All(built.Matrix.NaturalRows(), r => Assert.True(r[1] * r[2] <= 0.6 * r[5] + 1e-9));
        Assert.True(DesignMetrics.MinDistance(built.Matrix.Coded) > 0);
        // The constraint really cuts the box: a third of the unconstrained Latin hypercube breaks it.
        var free = DesignBuilder.Build(space, new DesignSpec(DesignMethod.LatinHypercube, Runs: runs)).Value!.Matrix;
        Assert.Contains(free.NaturalRows(), r => r[1] * r[2] > 0.6 * r[5]);
    }

    [Theory]
    [InlineData(DesignMethod.CentralComposite)]
    [InlineData(DesignMethod.BoxBehnken)]
    [InlineData(DesignMethod.FullFactorial)]
    [InlineData(DesignMethod.FractionalFactorial)]
    public void Classical_designs_keep_their_layout_and_list_the_runs_that_break_a_constraint(DesignMethod method)
    {
        var space = DoeFixtures.HeatSink(withBaseWidth: true);
        var built = DesignBuilder.Build(space, new DesignSpec(method, Constraints: [FinBudget])).Value!;
        var expected = built.Matrix.NaturalRows().Select((r, i) => (r, i))
            .Where(x => x.r[1] * x.r[2] > 0.6 * x.r[5] + 1e-9).Select(x => x.i + 1).ToList();
        Assert.NotEmpty(expected);
        Assert.Equal(expected, built.ConstraintViolations.Select(v => v.Run));
        Assert.All(built.ConstraintViolations, v => Assert.Equal([FinBudget], v.Constraints));
        Assert.Contains(built.Warnings, w => w.Contains($"{expected.Count} of {built.Matrix.RunCount} runs break the constraints", StringComparison.Ordinal));
    }
}
