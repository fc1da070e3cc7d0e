using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Doe;

/// <summary>Central composite and Box–Behnken designs against the NIST/SEMATECH e-Handbook of Statistical Methods
/// §5.3.3.6 (response surface designs) and Box & Behnken (1960).</summary>
public sealed class ResponseSurfaceDesignTests
{
    // k, factorial runs of the smallest resolution-V core (2^k for k ≤ 4, then 2^(5−1), 2^(6−1), 2^(7−1),
    // 2^(8−2), 2^(9−2), 2^(10−3): NIST §5.3.3.4.7), total runs with 2k axial and one centre run.
    [Theory]
    [InlineData(2, 4, 9)]
    [InlineData(3, 8, 15)]
    [InlineData(4, 16, 25)]
    [InlineData(5, 16, 27)]
    [InlineData(6, 32, 45)]
    [InlineData(7, 64, 79)]
    [InlineData(8, 64, 81)]
    [InlineData(9, 128, 147)]
    [InlineData(10, 128, 149)]
    public void Central_composite_run_counts_are_factorial_plus_axial_plus_centre(int k, int factorial, int total)
    {
        var space = DoeFixtures.Unit(k);
        foreach (var variant in Enum.GetValues<CentralCompositeVariant>())
        {
            var built = DesignBuilder.Build(space, new DesignSpec(DesignMethod.CentralComposite, Variant: variant)).Value!;
            Assert.Equal(total, built.Matrix.RunCount);
            Assert.Equal((factorial, 2 * k, 1), (built.Composite!.FactorialRuns, built.Composite.AxialRuns, built.Composite.CenterRuns));
            Assert.True(built.Composite.FactorialRuns == 4 || (built.Composite.FactorialRuns >= 8 && factorial >= 1));
            var metrics = DesignMetrics.Evaluate(built.Matrix, DesignModelKind.Quadratic);
            // NIST §5.3.3.6.1: five levels per factor for circumscribed and inscribed, three for face-centred.
            var levels = variant == CentralCompositeVariant.FaceCentered ? 3 : 5;
            Assert.All(metrics.Levels.Values, l => Assert.Equal(levels, l));
            Assert.NotNull(metrics.DEfficiency); // the full quadratic model is estimable
        }
    }

    [Theory]
    // NIST §5.3.3.6.1, table "Determining α for rotatability": α = F^(1/4) for F factorial runs.
    [InlineData(2, 1.414)]
    [InlineData(3, 1.682)]
    [InlineData(4, 2.000)]
    [InlineData(5, 2.000)] // 2^(5−1) core
    [InlineData(6, 2.378)] // 2^(6−1) core
    [InlineData(8, 2.828)] // 2^(8−2) core, 64 runs
    public void The_default_alpha_is_rotatable(int k, double alpha)
    {
        var composite = DesignBuilder.Build(DoeFixtures.Unit(k), new DesignSpec(DesignMethod.CentralComposite)).Value!.Composite!;
        Assert.Equal(alpha, composite.Alpha, 3);
        Assert.True(composite.Rotatable);
    }

    [Fact]
    public void Only_the_circumscribed_variant_leaves_the_ranges_and_the_preview_says_so()
    {
        var space = DoeFixtures.HeatSink();
        var circumscribed = DesignBuilder.Build(space, new DesignSpec(DesignMethod.CentralComposite)).Value!;
        Assert.False(circumscribed.StaysInsideRanges);
        Assert.False(circumscribed.Composite!.StaysInsideRanges);
        Assert.Contains("OUTSIDE the factor ranges", circumscribed.Composite.Note, StringComparison.Ordinal);
        Assert.Contains(circumscribed.Warnings, w => w.Contains("OUTSIDE", StringComparison.Ordinal));
        Assert.Contains(circumscribed.Warnings, w => w.Contains("'fin_count' reaches", StringComparison.Ordinal)); // 25 − 2·15 < 0

        foreach (var variant in new[] { CentralCompositeVariant.Inscribed, CentralCompositeVariant.FaceCentered })
        {
            var inside = DesignBuilder.Build(space, new DesignSpec(DesignMethod.CentralComposite, Variant: variant)).Value!;
            Assert.True(inside.StaysInsideRanges);
            Assert.True(inside.Composite!.StaysInsideRanges);
            Assert.Contains("stays inside the factor ranges", inside.Composite.Note, StringComparison.Ordinal);
        }
    }

    [Fact]
    public void Inscribed_puts_the_axial_runs_at_the_range_ends_and_the_factorial_runs_at_one_over_alpha()
    {
        var built = DesignBuilder.Build(DoeFixtures.Unit(2), new DesignSpec(DesignMethod.CentralComposite, Variant: CentralCompositeVariant.Inscribed)).Value!;
        var coded = built.Matrix.Coded;
        var alpha = Math.Sqrt(2);
        for (var i = 0; i < 4; i++) Assert.All(coded.Row(i), v => Assert.Equal(1 / alpha, Math.Abs(v), 12));
        Assert.Equal([-1.0, 0], coded.Row(4).ToArray());
        Assert.Equal([1.0, 0], coded.Row(5).ToArray());
        Assert.Equal([0.0, 0], coded.Row(8).ToArray());
    }

    [Fact]
    public void A_given_alpha_and_more_centre_runs_are_used()
    {
        var built = DesignBuilder.Build(DoeFixtures.Unit(3), new DesignSpec(DesignMethod.CentralComposite, Alpha: 1.5, CenterPoints: 3)).Value!;
        Assert.Equal(8 + 6 + 3, built.Matrix.RunCount);
        Assert.Equal(1.5, built.Composite!.Alpha);
        Assert.False(built.Composite.Rotatable);
        Assert.Equal(1.5, built.Matrix.Coded.Enumerate().Max());
    }

    [Fact]
    public void Categorical_factors_are_refused_naming_the_factor()
    {
        var space = FactorSpace.Create([new FactorSpec("a", Low: 0, High: 1), new FactorSpec("alloy", FactorKind.Categorical, Levels: ["6063", "copper"]), new FactorSpec("b", Low: 0, High: 1)]).Value!;
        foreach (var method in new[] { DesignMethod.CentralComposite, DesignMethod.BoxBehnken })
        {
            var refused = DesignBuilder.Build(space, new DesignSpec(method));
            Assert.Equal(OutcomeKind.Invalid, refused.Kind);
            Assert.Contains("'alloy' is categorical", refused.Errors!["factors[1].kind"][0], StringComparison.Ordinal);
        }
    }

    [Theory]
    // Box & Behnken (1960) and NIST §5.3.3.6.2: edge runs 12, 24, 40, 48, 56 for k = 3…7.
    [InlineData(3, 12)]
    [InlineData(4, 24)]
    [InlineData(5, 40)]
    [InlineData(6, 48)]
    [InlineData(7, 56)]
    public void Box_Behnken_edge_run_counts_match_the_published_designs(int k, int edge)
    {
        var built = DesignBuilder.Build(DoeFixtures.Unit(k), new DesignSpec(DesignMethod.BoxBehnken)).Value!;
        Assert.Equal(edge + 1, built.Matrix.RunCount);
        Assert.True(built.StaysInsideRanges);
        var metrics = DesignMetrics.Evaluate(built.Matrix, DesignModelKind.Quadratic);
        Assert.All(metrics.Levels.Values, l => Assert.Equal(3, l)); // NIST §5.3.3.6: three levels per factor
        Assert.NotNull(metrics.DEfficiency);
        // No corner runs: every edge run has exactly the block's factors away from the centre.
        var blockSize = k <= 5 ? 2 : 3;
        for (var i = 0; i < edge; i++) Assert.Equal(blockSize, built.Matrix.Coded.Row(i).Count(v => v != 0));
        Assert.All(built.Matrix.Coded.Row(edge), v => Assert.Equal(0, v));
    }

    [Fact]
    public void The_seven_factor_blocks_form_a_balanced_incomplete_block_design()
    {
        // Box & Behnken (1960): for k = 7 the triples form a BIBD with λ = 1, so every pair of factors varies together once.
        var pairs = BoxBehnken.Blocks(7).SelectMany(b => new[] { (b[0], b[1]), (b[0], b[2]), (b[1], b[2]) }.Select(p => (Math.Min(p.Item1, p.Item2), Math.Max(p.Item1, p.Item2)))).ToList();
        Assert.Equal(21, pairs.Count);
        Assert.Equal(21, pairs.Distinct().Count());
        // k = 6: every factor appears in three of the six blocks.
        Assert.All(Enumerable.Range(1, 6), f => Assert.Equal(3, BoxBehnken.Blocks(6).Count(b => b.Contains(f))));
    }

    [Fact]
    public void Box_Behnken_outside_three_to_seven_factors_is_refused()
    {
        var refused = DesignBuilder.Build(DoeFixtures.Unit(8), new DesignSpec(DesignMethod.BoxBehnken));
        Assert.Equal(OutcomeKind.Invalid, refused.Kind);
        Assert.Contains("3 to 7 factors", refused.Errors!["factors"][0], StringComparison.Ordinal);
    }
}
