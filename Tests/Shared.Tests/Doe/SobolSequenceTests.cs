using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Doe;

public sealed class SobolSequenceTests
{
    [Fact]
    public void The_first_1024_points_in_10_dimensions_equal_scipy_unscrambled()
    {
        // Source: scipy.stats.qmc.Sobol(d=10, scramble=False).random(1024), Fixtures/doe/sobol_unscrambled.json.
        var expected = DoeFixtures.Points(DoeFixtures.Load("sobol_unscrambled.json").GetProperty("points"));
        var points = SobolSequence.Generate(1024, 10);
        for (var i = 0; i < 1024; i++)
            for (var d = 0; d < 10; d++)
                Assert.True(expected[i, d] == points[i, d], $"point {i}, dimension {d}: scipy {expected[i, d]}, ours {points[i, d]}");
    }

    [Theory]
    [InlineData(8, 5, 3)]
    [InlineData(10, 21, 11)]
    [InlineData(12, 50, 99)]
    public void Scrambled_points_keep_one_point_per_elementary_interval_in_every_dimension(int m, int dimensions, int seed)
    {
        // Property of digital (t, m, s)-nets kept by linear matrix scrambling with a digital shift (Owen 2003):
        // every 1-D projection of the first 2^m points is a (0, m, 1)-net.
        var n = 1 << m;
        var points = SobolSequence.Generate(n, dimensions, scramble: true, seed: seed);
        for (var d = 0; d < dimensions; d++)
        {
            var cells = Enumerable.Range(0, n).Select(i => (int)(points[i, d] * n)).ToHashSet();
            Assert.Equal(n, cells.Count);
        }
    }

    [Fact]
    public void Scrambling_depends_on_the_seed_and_the_same_seed_gives_the_same_points()
    {
        var a = SobolSequence.Generate(64, 4, scramble: true, seed: 5);
        var b = SobolSequence.Generate(64, 4, scramble: true, seed: 5);
        var c = SobolSequence.Generate(64, 4, scramble: true, seed: 6);
        Assert.Equal(a.Cast<double>(), b.Cast<double>());
        Assert.NotEqual(a.Cast<double>(), c.Cast<double>());
        Assert.NotEqual(a.Cast<double>(), SobolSequence.Generate(64, 4).Cast<double>());
    }

    [Fact]
    public void The_table_covers_at_least_21_dimensions()
    {
        Assert.True(SobolSequence.MaxDimensions >= 21);
        Assert.Equal(FactorSpace.MaxFactors, SobolSequence.MaxDimensions);
    }
}
