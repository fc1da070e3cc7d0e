using Runfold.Shared.Sensitivity;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Sensitivity;

public sealed class MainEffectsTests
{
    [Fact]
    public void Curves_average_the_other_factors_out()
    {
        // y = x² + 3·z with x, z uniform on [−1, 1]: E[y | x] = x², E[y | z] = 1/3 + 3z, and the spread of y at a
        // fixed x is the standard deviation of 3z, √3 (uniform moments: common practice).
        var space = FunctionSurrogate.Continuous(("x", -1, 1), ("z", -1, 1));
        var curves = MainEffects.Curves(new FunctionSurrogate(space, v => v[0] * v[0] + 3 * v[1]),
            new MainEffectOptions { GridPoints = 11, Samples = 4096 });
        Assert.Equal(2, curves.Count);
        for (var g = 0; g < 11; g++)
        {
            var x = curves[0].Natural[g];
            Assert.Equal(-1 + 0.2 * g, x, 12);
            Assert.Equal(x * x, curves[0].Mean[g], 3);
            Assert.Equal(Math.Sqrt(3), curves[0].Spread[g], 2);
            Assert.Equal(1.0 / 3 + 3 * curves[1].Natural[g], curves[1].Mean[g], 3);
        }
    }

    [Fact]
    public void Integer_and_categorical_factors_take_their_own_values_and_surfaces_cover_both_grids()
    {
        var space = FactorSpace.Create([
            new FactorSpec("fin_count", FactorKind.Integer, 10, 14),
            new FactorSpec("alloy", FactorKind.Categorical, Levels: ["aluminium", "copper"]),
            new FactorSpec("velocity", Low: 1, High: 6),
        ]).Value!;
        var surrogate = new FunctionSurrogate(space, v => v[0] + 10 * v[1] + v[0] * v[2]);
        var curves = MainEffects.Curves(surrogate, new MainEffectOptions { GridPoints = 21, Samples = 1024 });
        Assert.Equal([10.0, 11, 12, 13, 14], curves[0].Natural);
        Assert.Equal([0.0, 1], curves[1].Natural);
        // E[y | alloy] = E[count] + 10·alloy + E[count]·E[velocity] = 12 + 10·alloy + 12·3.5.
        Assert.Equal(12 + 42, curves[1].Mean[0], 1);
        Assert.Equal(22 + 42, curves[1].Mean[1], 1);

        var surface = MainEffects.Surface(surrogate, 0, 2, new MainEffectOptions { GridPoints = 6, Samples = 256 });
        Assert.Equal(5, surface.NaturalA.Count);
        Assert.Equal(6, surface.NaturalB.Count);
        Assert.Equal(5, surface.Mean.Count);
        // E[y | count, velocity] = count + 10·E[alloy] + count·velocity, E[alloy] = 0.5.
        for (var i = 0; i < 5; i++)
            for (var j = 0; j < 6; j++)
                Assert.Equal(surface.NaturalA[i] + 5 + surface.NaturalA[i] * surface.NaturalB[j], surface.Mean[i][j], 9);
        Assert.Throws<ArgumentException>(() => MainEffects.Surface(surrogate, 1, 1));
    }
}
