using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Doe;

public sealed class DesignBuilderTests
{
    public static TheoryData<DesignSpec> EveryMethod => new()
    {
        new DesignSpec(DesignMethod.FullFactorial, Levels: [3]),
        new DesignSpec(DesignMethod.FractionalFactorial, Resolution: 3),
        new DesignSpec(DesignMethod.CentralComposite, Variant: CentralCompositeVariant.FaceCentered),
        new DesignSpec(DesignMethod.BoxBehnken),
        new DesignSpec(DesignMethod.LatinHypercube, Runs: 25, Seed: 11),
        new DesignSpec(DesignMethod.LatinHypercube, Runs: 25, Seed: 11, Maximin: false),
        new DesignSpec(DesignMethod.Sobol, Runs: 32),
        new DesignSpec(DesignMethod.Sobol, Runs: 32, Scramble: true, Seed: 11),
        new DesignSpec(DesignMethod.DOptimal, Runs: 30, Seed: 11),
    };

    [Theory]
    [MemberData(nameof(EveryMethod))]
    public void Every_method_gives_the_same_matrix_for_the_same_request(DesignSpec spec)
    {
        var space = DoeFixtures.HeatSink();
        var first = DesignBuilder.Build(space, spec);
        var second = DesignBuilder.Build(space, spec);
        Assert.True(first.IsOk, first.Message);
        Assert.Equal(first.Value!.Matrix.Coded, second.Value!.Matrix.Coded);
        Assert.NotEmpty(first.Value.Notes);
        Assert.Equal(spec.Method, first.Value.Method);
        // Integer factors are whole in natural units.
        Assert.All(first.Value.Matrix.NaturalRows(), r => Assert.Equal(Math.Round(r[2]), r[2]));
    }

    [Fact]
    public void Another_seed_gives_another_space_filling_design()
    {
        var space = DoeFixtures.HeatSink();
        foreach (var spec in new[] { new DesignSpec(DesignMethod.LatinHypercube, Runs: 20), new DesignSpec(DesignMethod.Sobol, Runs: 16, Scramble: true) })
            Assert.NotEqual(DesignBuilder.Build(space, spec with { Seed = 1 }).Value!.Matrix.Coded, DesignBuilder.Build(space, spec with { Seed = 2 }).Value!.Matrix.Coded);
    }

    [Theory]
    [InlineData(DesignMethod.LatinHypercube)]
    [InlineData(DesignMethod.Sobol)]
    [InlineData(DesignMethod.DOptimal)]
    public void More_runs_than_the_limit_are_refused_with_the_count(DesignMethod method)
    {
        var refused = DesignBuilder.Build(DoeFixtures.Unit(3), new DesignSpec(method, Runs: 10_001));
        Assert.Equal(OutcomeKind.Unprocessable, refused.Kind);
        Assert.Contains("needs 10,001 runs, more than the limit of 10,000", refused.Errors!["design"][0], StringComparison.Ordinal);
        var smaller = DesignBuilder.Build(DoeFixtures.Unit(3), new DesignSpec(method, Runs: 40), new DesignLimits(MaxRuns: 30));
        Assert.Contains("limit of 30", smaller.Errors!["design"][0], StringComparison.Ordinal);
    }

    [Fact]
    public void A_central_composite_over_the_limit_suggests_a_space_filling_design()
    {
        // 14 factors: the 256-run resolution-V core (Xu 2009) + 28 axial + 1 centre = 285 runs, over a limit of 200.
        var refused = DesignBuilder.Build(DoeFixtures.Unit(14), new DesignSpec(DesignMethod.CentralComposite), new DesignLimits(MaxRuns: 200));
        Assert.Equal(OutcomeKind.Unprocessable, refused.Kind);
        var message = refused.Errors!["design"][0];
        Assert.Contains("285 runs", message, StringComparison.Ordinal);
        Assert.Contains("latinHypercube or sobol", message, StringComparison.Ordinal);
        Assert.Equal(285, DesignBuilder.Build(DoeFixtures.Unit(14), new DesignSpec(DesignMethod.CentralComposite)).Value!.Matrix.RunCount);
    }

    public static TheoryData<DesignSpec, string, string> BadSpecs => new()
    {
        { new DesignSpec(DesignMethod.Sobol, Runs: 0), "design.runs", "at least one run" },
        { new DesignSpec(DesignMethod.CentralComposite, CenterPoints: -1), "design.centerPoints", "between 0 and 100" },
        { new DesignSpec(DesignMethod.CentralComposite, Alpha: double.NaN), "design.alpha", "positive finite" },
        { new DesignSpec(DesignMethod.CentralComposite, Alpha: double.PositiveInfinity), "design.alpha", "positive finite" },
        { new DesignSpec(DesignMethod.CentralComposite, Variant: CentralCompositeVariant.FaceCentered, Alpha: 1.5), "design.alpha", "α = 1" },
        { new DesignSpec(DesignMethod.FractionalFactorial, Resolution: 2), "design.resolution", "between 3" },
        { new DesignSpec(DesignMethod.DOptimal, Model: "cubic"), "design.model", "linear, interactions or quadratic" },
        { new DesignSpec((DesignMethod)42), "design.method", "must be fullFactorial" },
        { new DesignSpec(DesignMethod.FullFactorial, Levels: [2, 3]), "design.levels", "one per factor" },
    };

    [Theory]
    [MemberData(nameof(BadSpecs))]
    public void A_bad_design_field_is_a_validation_error_naming_it(DesignSpec spec, string field, string words)
    {
        var refused = DesignBuilder.Build(DoeFixtures.Unit(3), spec);
        Assert.Equal(OutcomeKind.Invalid, refused.Kind);
        Assert.True(refused.Errors!.TryGetValue(field, out var messages), $"no error for {field}: {string.Join("; ", refused.Errors.Keys)}");
        Assert.Contains(words, messages[0], StringComparison.Ordinal);
    }

    public static TheoryData<FactorSpec[], string, string> BadFactors => new()
    {
        { [], "factors", "at least one factor" },
        { [new FactorSpec("a", Low: 0, High: 1), new FactorSpec("A", Low: 0, High: 1)], "factors[1].name", "unique" },
        { [new FactorSpec("a", Low: 1, High: 1)], "factors[0].high", "greater than its low" },
        { [new FactorSpec("a", Low: 0, High: 1, Scale: FactorScale.Log)], "factors[0].low", "positive low" },
        { [new FactorSpec("a", FactorKind.Categorical, Levels: ["only"])], "factors[0].levels", "at least two levels" },
        { [new FactorSpec("a", Low: double.NaN, High: 1)], "factors[0].low", "finite number" },
        { [new FactorSpec("a", Low: 0, High: double.PositiveInfinity)], "factors[0].high", "finite number" },
    };

    [Theory]
    [MemberData(nameof(BadFactors))]
    public void A_bad_factor_is_refused_by_the_preview_naming_the_field(FactorSpec[] factors, string field, string words)
    {
        var refused = DesignPreviews.Preview(new DesignPreviewRequest(factors, new DesignSpec(DesignMethod.LatinHypercube)));
        Assert.Equal(OutcomeKind.Invalid, refused.Kind);
        Assert.Contains(words, refused.Errors![field][0], StringComparison.Ordinal);
    }

    [Fact]
    public void The_preview_carries_runs_metrics_and_layout()
    {
        var preview = DesignPreviews.Preview(new DesignPreviewRequest(DoeFixtures.HeatSink().ToSpecs(), new DesignSpec(DesignMethod.CentralComposite))).Value!;
        Assert.Equal(27, preview.Runs.Count); // 2^(5−1) + 10 + 1
        Assert.Equal(27, preview.Metrics.Runs);
        Assert.Equal(DesignModelKind.Quadratic, preview.Metrics.Model);
        Assert.Equal(21, preview.Metrics.ModelTerms);
        Assert.False(preview.StaysInsideRanges);
        Assert.False(preview.Composite!.StaysInsideRanges);
        Assert.Equal(40.0, preview.Runs[^1].Factors["fin_height"].Number); // the centre run
        Assert.Contains(preview.Notes, n => n.StartsWith("Central composite (circumscribed", StringComparison.Ordinal));
    }
}
