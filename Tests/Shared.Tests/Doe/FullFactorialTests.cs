using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Doe;

public sealed class FullFactorialTests
{
    [Fact]
    public void A_mixed_level_factorial_lists_every_combination_in_standard_order()
    {
        var space = FactorSpace.Create(
        [
            new FactorSpec("a", Low: 0, High: 10),
            new FactorSpec("b", FactorKind.Integer, 1, 5),
            new FactorSpec("c", FactorKind.Categorical, Levels: ["x", "y"]),
        ]).Value!;
        var design = DesignBuilder.Build(space, new DesignSpec(DesignMethod.FullFactorial, Levels: [2, 3, 2])).Value!.Matrix;

        Assert.Equal(12, design.RunCount);
        var rows = design.NaturalRows().Select(r => string.Join(",", r)).ToList();
        Assert.Equal(["0,1,0", "10,1,0", "0,3,0", "10,3,0", "0,5,0", "10,5,0",
                      "0,1,1", "10,1,1", "0,3,1", "10,3,1", "0,5,1", "10,5,1"], rows);
        Assert.Equal(12, rows.Distinct().Count());
    }

    [Fact]
    public void The_default_is_two_levels_per_numeric_factor_and_all_levels_of_a_categorical_one()
    {
        var space = FactorSpace.Create(
        [
            new FactorSpec("a", Low: 0, High: 1),
            new FactorSpec("c", FactorKind.Categorical, Levels: ["x", "y", "z"]),
        ]).Value!;
        Assert.Equal(6, DesignBuilder.Build(space, new DesignSpec(DesignMethod.FullFactorial)).Value!.Matrix.RunCount);
    }

    [Fact]
    public void Too_many_runs_are_refused_with_the_count_and_a_suggestion()
    {
        var space = FactorSpace.Create([.. Enumerable.Range(0, 7).Select(i => new FactorSpec($"f{i}", Low: 0, High: 1))]).Value!;
        var result = DesignBuilder.Build(space, new DesignSpec(DesignMethod.FullFactorial, Levels: [10]));
        Assert.Equal(OutcomeKind.Unprocessable, result.Kind);
        var message = result.Errors!["design"][0];
        Assert.Contains("10,000,000 runs", message, StringComparison.Ordinal);
        Assert.Contains("limit of 10,000", message, StringComparison.Ordinal);
        Assert.Contains("fractional factorial", message, StringComparison.Ordinal);
    }

    [Fact]
    public void An_integer_factor_cannot_have_more_levels_than_whole_values()
    {
        var space = FactorSpace.Create([new FactorSpec("n", FactorKind.Integer, 1, 3)]).Value!;
        var result = DesignBuilder.Build(space, new DesignSpec(DesignMethod.FullFactorial, Levels: [4]));
        Assert.Contains("only 3 whole values", result.Errors!["design.levels"][0], StringComparison.Ordinal);
    }
}
