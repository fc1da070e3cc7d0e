using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Studies;

public sealed class FactorSpaceTests
{
    private static FactorSpace Space(params FactorSpec[] specs) => FactorSpace.Create(specs).Value!;

    [Fact]
    public void Coding_maps_the_range_onto_minus_one_to_plus_one()
    {
        var space = Space(new FactorSpec("fin_height", Low: 20, High: 60));
        Assert.Equal(-1, space[0].ToCoded(20));
        Assert.Equal(0, space[0].ToCoded(40));
        Assert.Equal(1, space[0].ToCoded(60));
        Assert.Equal(50, space[0].FromCoded(0.5));
    }

    [Fact]
    public void A_log_scale_factor_is_coded_in_decades()
    {
        var space = Space(new FactorSpec("flow", Low: 1, High: 100, Scale: FactorScale.Log));
        Assert.Equal(0, space[0].ToCoded(10), 12);
        Assert.Equal(10, space[0].FromCoded(0), 12);
    }

    [Fact]
    public void Integer_factors_round_and_categorical_factors_snap_to_a_level()
    {
        var space = Space(new FactorSpec("fin_count", FactorKind.Integer, 10, 40),
                          new FactorSpec("alloy", FactorKind.Categorical, Levels: ["6063", "1050", "copper"]));
        Assert.Equal(25, space[0].FromCoded(0));
        Assert.Equal(26, space[0].FromCoded(0.04)); // 25.6 rounds up
        Assert.Equal(1, space[1].FromCoded(0.2));
        Assert.Equal(2, space[1].FromCoded(5)); // clamped to the last level
        Assert.Equal("copper", space[1].ToValue(2).Level);
        Assert.True(space[1].TryFromValue(FactorValue.OfLevel("COPPER"), out var index, out _));
        Assert.Equal(2, index);
        Assert.False(space[1].TryFromValue(FactorValue.OfLevel("steel"), out _, out var error));
        Assert.Contains("6063, 1050, copper", error, StringComparison.Ordinal);
    }

    [Fact]
    public void Every_problem_is_named_by_its_field()
    {
        var result = FactorSpace.Create(
        [
            new FactorSpec("ok", Low: 0, High: 1),
            new FactorSpec("OK", Low: 0, High: 1),
            new FactorSpec("2bad", Low: 0, High: 1),
            new FactorSpec("inverted", Low: 5, High: 1),
            new FactorSpec("logneg", Low: -1, High: 1, Scale: FactorScale.Log),
            new FactorSpec("count", FactorKind.Integer, 0.5, 4),
            new FactorSpec("one", FactorKind.Categorical, Levels: ["a"]),
            new FactorSpec("nan", Low: double.NaN, High: 1),
        ]);
        var errors = result.Errors.ToDictionary();
        Assert.False(result.IsValid);
        Assert.Contains("unique", errors["factors[1].name"][0], StringComparison.Ordinal);
        Assert.Contains("letters, digits and underscores", errors["factors[2].name"][0], StringComparison.Ordinal);
        Assert.Contains("greater than its low", errors["factors[3].high"][0], StringComparison.Ordinal);
        Assert.Contains("positive low", errors["factors[4].low"][0], StringComparison.Ordinal);
        Assert.Contains("whole-number", errors["factors[5].low"][0], StringComparison.Ordinal);
        Assert.Contains("at least two levels", errors["factors[6].levels"][0], StringComparison.Ordinal);
        Assert.Contains("finite", errors["factors[7].low"][0], StringComparison.Ordinal);
    }
}
