using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Doe;

public sealed class FractionalFactorialTests
{
    /// <summary>NIST/SEMATECH e-Handbook of Statistical Methods §5.3.3.4.7, "Summary of useful fractional factorial
    /// designs": k, design 2^(k−p), resolution, generators (transcribed here independently of the catalogue).</summary>
    public static TheoryData<int, int, int, string> HandbookTable => new()
    {
        { 3, 1, 3, "3 = 12" },
        { 4, 1, 4, "4 = 123" },
        { 5, 1, 5, "5 = 1234" },
        { 5, 2, 3, "4 = 12, 5 = 13" },
        { 6, 1, 6, "6 = 12345" },
        { 6, 2, 4, "5 = 123, 6 = 234" },
        { 6, 3, 3, "4 = 12, 5 = 13, 6 = 23" },
        { 7, 1, 7, "7 = 123456" },
        { 7, 2, 4, "6 = 1234, 7 = 1245" },
        { 7, 3, 4, "5 = 123, 6 = 234, 7 = 134" },
        { 7, 4, 3, "4 = 12, 5 = 13, 6 = 23, 7 = 123" },
        { 8, 1, 8, "8 = 1234567" },
        { 8, 2, 5, "7 = 1234, 8 = 1256" },
        { 8, 3, 4, "6 = 123, 7 = 124, 8 = 2345" },
        { 8, 4, 4, "5 = 234, 6 = 134, 7 = 123, 8 = 124" },
        { 9, 2, 6, "8 = 13467, 9 = 23567" },
        { 9, 3, 4, "7 = 1234, 8 = 1356, 9 = 3456" },
        { 9, 4, 4, "6 = 2345, 7 = 1345, 8 = 1245, 9 = 1235" },
        { 9, 5, 3, "5 = 123, 6 = 234, 7 = 134, 8 = 124, 9 = 1234" },
        { 10, 3, 5, "8 = 1237, 9 = 2345, 10 = 1346" },
        { 10, 4, 4, "7 = 2346, 8 = 1346, 9 = 1245, 10 = 1235" },
        { 10, 5, 4, "6 = 1234, 7 = 1235, 8 = 1245, 9 = 1345, 10 = 2345" },
        { 10, 6, 3, "5 = 123, 6 = 234, 7 = 134, 8 = 124, 9 = 1234, 10 = 12" },
        { 11, 4, 5, "8 = 1237, 9 = 2345, 10 = 1346, 11 = 1234567" },
        { 11, 5, 4, "7 = 345, 8 = 1234, 9 = 126, 10 = 2456, 11 = 1456" },
        { 11, 6, 4, "6 = 123, 7 = 234, 8 = 345, 9 = 134, 10 = 145, 11 = 245" },
        { 11, 7, 3, "5 = 123, 6 = 234, 7 = 134, 8 = 124, 9 = 1234, 10 = 12, 11 = 13" },
        { 15, 11, 3, "5 = 123, 6 = 234, 7 = 134, 8 = 124, 9 = 1234, 10 = 12, 11 = 13, 12 = 14, 13 = 23, 14 = 24, 15 = 34" },
        // NIST Dataplot design index DEXRES4 (minimal-run resolution IV designs), 32 runs for 12 to 15 factors.
        { 12, 7, 4, "6 = 123, 7 = 124, 8 = 125, 9 = 134, 10 = 135, 11 = 145, 12 = 234" },
        { 15, 10, 4, "6 = 123, 7 = 124, 8 = 125, 9 = 134, 10 = 135, 11 = 145, 12 = 234, 13 = 235, 14 = 245, 15 = 345" },
        // Xu (2009), Technometrics 51:262–277, the 256-run minimum-aberration designs 12-4.1 … 15-7.1 (columns as
        // transcribed in the csw93 catalogue's xu_256.txt: 127 143 179 213 105 27 46, bit j = base factor j + 1).
        { 12, 4, 6, "9 = 1234567, 10 = 12348, 11 = 12568, 12 = 13578" },
        { 13, 5, 5, "9 = 1234567, 10 = 12348, 11 = 12568, 12 = 13578, 13 = 1467" },
        { 14, 6, 5, "9 = 1234567, 10 = 12348, 11 = 12568, 12 = 13578, 13 = 1467, 14 = 1245" },
        { 15, 7, 5, "9 = 1234567, 10 = 12348, 11 = 12568, 12 = 13578, 13 = 1467, 14 = 1245, 15 = 2346" },
    };

    /// <summary>Xu (2009) prints each design's word-length pattern (A4, A5, …) beside its columns: the counts of
    /// the defining relation's words by length, computed here from all 2^p − 1 words.</summary>
    [Theory]
    [InlineData(12, 4, new[] { 0, 0, 12, 0, 3 })]
    [InlineData(13, 5, new[] { 0, 3, 12, 12, 3 })]
    [InlineData(14, 6, new[] { 0, 9, 18, 16, 7 })]
    [InlineData(15, 7, new[] { 0, 15, 30, 26, 15 })]
    public void The_256_run_fractions_have_the_published_word_length_pattern(int k, int p, int[] fromA4)
    {
        var plan = Assert.Single(FractionalFactorial.For(k), f => f.Fraction == p);
        var lengths = plan.Words.Select(w => System.Numerics.BitOperations.PopCount((ulong)w)).ToList();
        Assert.Equal(fromA4, Enumerable.Range(4, fromA4.Length).Select(length => lengths.Count(l => l == length)));
        Assert.Equal(256, plan.Runs);
    }

    [Theory]
    [MemberData(nameof(HandbookTable))]
    public void The_catalogue_has_the_published_generators_and_its_defining_relation_has_the_published_resolution(
        int k, int p, int resolution, string generators)
    {
        var plan = Assert.Single(FractionalFactorial.For(k), f => f.Fraction == p);
        var ours = string.Join(", ", plan.Generators.Select((g, i) => $"{k - p + i + 1} = {string.Concat(g)}"));
        Assert.Equal(generators, ours);
        Assert.Equal(resolution, plan.Resolution); // computed from all 2^p − 1 words, not read from the table
        Assert.Equal(1 << (k - p), plan.Runs);
    }

    [Theory]
    [MemberData(nameof(HandbookTable))]
    public void Every_column_is_balanced_and_orthogonal_and_the_runs_are_distinct(int k, int p, int resolution, string generators)
    {
        _ = (resolution, generators);
        var coded = FractionalFactorial.Generate(Assert.Single(FractionalFactorial.For(k), f => f.Fraction == p));
        Assert.Equal(1 << (k - p), coded.RowCount);
        for (var a = 0; a < k; a++)
        {
            Assert.Equal(0, coded.Column(a).Sum());
            for (var b = a + 1; b < k; b++) Assert.Equal(0, coded.Column(a).DotProduct(coded.Column(b)));
        }
        Assert.Equal(coded.RowCount, Enumerable.Range(0, coded.RowCount).Select(i => string.Join(",", coded.Row(i))).Distinct().Count());
    }

    [Theory]
    [InlineData(5, 3, 8)]    // NIST §5.3.3.4.7: 2^(5−2) III
    [InlineData(5, 4, 16)]   // 2^(5−1) V is the smallest of resolution ≥ IV
    [InlineData(7, 4, 16)]   // 2^(7−3) IV
    [InlineData(8, 5, 64)]   // 2^(8−2) V
    [InlineData(9, 5, 128)]  // 2^(9−2) VI is the smallest of resolution ≥ V
    [InlineData(11, 5, 128)] // 2^(11−4) V
    [InlineData(12, 4, 32)]  // Dataplot DEXRES4: 2^(12−7) IV
    [InlineData(12, 5, 256)] // Xu 2009: 2^(12−4) VI is the smallest of resolution ≥ V
    [InlineData(15, 5, 256)] // Xu 2009: 2^(15−7) V
    [InlineData(3, 4, 8)]    // no half fraction of resolution IV for 3 factors: the full 2^3
    public void A_requested_minimum_resolution_gets_the_smallest_fraction_that_meets_it(int k, int resolution, int runs)
    {
        var plan = FractionalFactorial.Smallest(k, resolution);
        Assert.Equal(runs, plan.Runs);
        Assert.True((plan.Resolution ?? int.MaxValue) >= resolution);
    }

    [Fact]
    public void A_half_fraction_of_four_factors_aliases_each_two_factor_interaction_with_another()
    {
        // Box, Hunter & Hunter (2005) §6.2: for 2^(4−1) IV with D = ABC, I = ABCD, AB = CD, AC = BD, AD = BC.
        var space = DoeFixtures.Unit(4);
        var built = DesignBuilder.Build(space, new DesignSpec(DesignMethod.FractionalFactorial, Resolution: 4)).Value!;
        var fraction = built.Fraction!;
        Assert.Equal((4, 1, 8, 4), (fraction.Factors, fraction.Fraction, fraction.Runs, fraction.Resolution));
        Assert.Equal(["x4 = x1*x2*x3"], fraction.Generators);
        Assert.Equal(["I = x1*x2*x3*x4"], fraction.DefiningRelation);
        var chains = fraction.Aliases.ToDictionary(a => a.Effect, a => a.AliasedWith);
        Assert.Empty(chains["x1"]); // resolution IV: main effects clear of two-factor interactions
        Assert.Equal(["x3*x4"], chains["x1*x2"]);
        Assert.Equal(["x2*x4"], chains["x1*x3"]);
        Assert.Equal(["x2*x3"], chains["x1*x4"]);
        Assert.Equal(8, built.Matrix.RunCount);
    }

    [Fact]
    public void A_resolution_III_fraction_aliases_main_effects_with_two_factor_interactions()
    {
        // NIST §5.3.3.4.7: 2^(3−1) III with 3 = 12, so I = 123 and 1 = 23.
        var space = DoeFixtures.Unit(3);
        var fraction = DesignBuilder.Build(space, new DesignSpec(DesignMethod.FractionalFactorial, Resolution: 3)).Value!.Fraction!;
        Assert.Equal(3, fraction.Resolution);
        Assert.Equal(["x2*x3"], fraction.Aliases.Single(a => a.Effect == "x1").AliasedWith);
    }

    [Fact]
    public void A_run_count_picks_that_fraction_and_a_count_not_in_the_table_is_a_field_error()
    {
        var space = DoeFixtures.Unit(7);
        var eight = DesignBuilder.Build(space, new DesignSpec(DesignMethod.FractionalFactorial, Runs: 8)).Value!;
        Assert.Equal((8, 3), (eight.Matrix.RunCount, eight.Fraction!.Resolution));
        var twelve = DesignBuilder.Build(space, new DesignSpec(DesignMethod.FractionalFactorial, Runs: 12));
        Assert.Equal(OutcomeKind.Invalid, twelve.Kind);
        Assert.Contains("8, 16, 32, 64, 128", twelve.Errors!["design.runs"][0], StringComparison.Ordinal);
    }

    [Fact]
    public void Natural_values_are_the_factor_ends_and_two_level_categorical_factors_take_part()
    {
        var space = FactorSpace.Create(
        [
            new FactorSpec("fin_height", Low: 20, High: 60),
            new FactorSpec("fin_count", FactorKind.Integer, 10, 40),
            new FactorSpec("alloy", FactorKind.Categorical, Levels: ["6063", "copper"]),
            new FactorSpec("air_velocity", Low: 1, High: 6),
        ]).Value!;
        var design = DesignBuilder.Build(space, new DesignSpec(DesignMethod.FractionalFactorial)).Value!.Matrix;
        Assert.Equal(8, design.RunCount);
        Assert.All(design.NaturalRows(), r => Assert.Equal([true, true, true, true],
            new[] { r[0] is 20 or 60, r[1] is 10 or 40, r[2] is 0 or 1, r[3] is 1 or 6 }));

        var three = FactorSpace.Create([.. space.ToSpecs().Take(3), new FactorSpec("coating", FactorKind.Categorical, Levels: ["none", "black", "clear"])]).Value!;
        var refused = DesignBuilder.Build(three, new DesignSpec(DesignMethod.FractionalFactorial));
        Assert.Equal(OutcomeKind.Invalid, refused.Kind);
        Assert.Contains("'coating' has 3 levels", refused.Errors!["design.method"][0], StringComparison.Ordinal);
    }
}
