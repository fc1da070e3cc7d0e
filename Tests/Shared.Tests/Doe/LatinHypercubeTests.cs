using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Doe;

public sealed class LatinHypercubeTests
{
    [Fact]
    public void Every_column_has_exactly_one_point_per_stratum_for_random_sizes_and_seeds()
    {
        // Definition of a Latin hypercube (McKay, Beckman & Conover 1979), as a property over random n, k, seeds.
        var random = new Random(2024);
        for (var trial = 0; trial < 40; trial++)
        {
            var n = random.Next(1, 60);
            var k = random.Next(1, 9);
            var seed = random.Next();
            foreach (var unit in new[] { LatinHypercube.Random(n, k, seed), LatinHypercube.Maximin(n, k, seed, new LatinHypercubeOptions(OuterIterations: 5)) })
                for (var j = 0; j < k; j++)
                {
                    var strata = Enumerable.Range(0, n).Select(i => (int)Math.Floor(unit[i, j] * n)).Order().ToArray();
                    Assert.Equal(Enumerable.Range(0, n), strata);
                }
        }
    }

    [Fact]
    public void Designs_from_the_builder_keep_the_strata_in_coded_units()
    {
        var built = DesignBuilder.Build(DoeFixtures.Unit(4), new DesignSpec(DesignMethod.LatinHypercube, Runs: 23, Seed: 9)).Value!;
        for (var j = 0; j < 4; j++)
            Assert.Equal(Enumerable.Range(0, 23), built.Matrix.Coded.Column(j).Select(c => (int)Math.Floor((c + 1) / 2 * 23)).Order());
    }

    [Theory]
    // Source: scipy.stats.qmc.LatinHypercube(d, optimization="random-cd", seed=0…10), smallest pairwise distance,
    // median over the seeds (Fixtures/doe/lhs_random_cd.json).
    [InlineData(20, 5)]
    [InlineData(50, 8)]
    public void Maximin_designs_are_farther_apart_than_random_ones_and_than_scipys_random_cd(int n, int k)
    {
        var fixture = DoeFixtures.Load("lhs_random_cd.json").GetProperty("cases").EnumerateArray()
            .Single(c => c.GetProperty("runs").GetInt32() == n && c.GetProperty("dimensions").GetInt32() == k);
        var scipyMedian = fixture.GetProperty("median").GetDouble();

        var seeds = Enumerable.Range(0, 11).ToArray();
        var maximin = seeds.Select(s => DesignMetrics.MinDistance(LatinHypercube.Maximin(n, k, s))).Order().ToArray();
        var random = seeds.Select(s => DesignMetrics.MinDistance(LatinHypercube.Random(n, k, s))).Order().ToArray();
        var ourMedian = maximin[5];
        Assert.True(ourMedian > scipyMedian, $"maximin median {ourMedian:0.####} vs scipy random-cd median {scipyMedian:0.####}");
        Assert.True(maximin[0] > scipyMedian, $"even the worst maximin seed ({maximin[0]:0.####}) beats scipy's median {scipyMedian:0.####}");
        Assert.True(maximin[0] > random[^1], $"worst maximin {maximin[0]:0.####} vs best random {random[^1]:0.####}");
    }

    [Fact]
    public void The_same_seed_gives_the_same_design_and_another_seed_another()
    {
        Assert.Equal(LatinHypercube.Maximin(30, 4, 3).Cast<double>(), LatinHypercube.Maximin(30, 4, 3).Cast<double>());
        Assert.NotEqual(LatinHypercube.Maximin(30, 4, 3).Cast<double>(), LatinHypercube.Maximin(30, 4, 4).Cast<double>());
        Assert.Equal(LatinHypercube.Random(30, 4, 3).Cast<double>(), LatinHypercube.Random(30, 4, 3).Cast<double>());
    }

    [Fact]
    public void Integer_and_categorical_factors_take_their_values_evenly()
    {
        var space = FactorSpace.Create(
        [
            new FactorSpec("fin_count", FactorKind.Integer, 10, 13),
            new FactorSpec("alloy", FactorKind.Categorical, Levels: ["6063", "copper"]),
            new FactorSpec("air_velocity", Low: 1, High: 6, Scale: FactorScale.Log),
        ]).Value!;
        var design = DesignBuilder.Build(space, new DesignSpec(DesignMethod.LatinHypercube, Runs: 40, Maximin: false)).Value!.Matrix;
        var rows = design.NaturalRows().ToList();
        Assert.All(rows.GroupBy(r => r[0]), g => Assert.Equal(10, g.Count())); // four whole values, ten each
        Assert.All(rows.GroupBy(r => r[1]), g => Assert.Equal(20, g.Count()));
        Assert.Equal(20, rows.Count(r => r[2] < Math.Sqrt(6))); // log scale: half below the geometric middle
        Assert.All(rows, r => Assert.Equal(r[0], Math.Round(r[0])));
    }

    [Fact]
    public void Ten_runs_per_factor_are_the_default()
    {
        var built = DesignBuilder.Build(DoeFixtures.HeatSink(), new DesignSpec(DesignMethod.LatinHypercube)).Value!;
        Assert.Equal(50, built.Matrix.RunCount);
        Assert.Contains(built.Notes, n => n.Contains("Loeppky", StringComparison.Ordinal));
    }
}
