using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Doe;

public sealed class DesignMetricsTests
{
    [Fact]
    public void Centered_L2_discrepancy_equals_scipy_on_every_fixture_sample()
    {
        // Source: scipy.stats.qmc.discrepancy(sample, method="CD"), Fixtures/doe/discrepancy_cd.json.
        foreach (var sample in DoeFixtures.Load("discrepancy_cd.json").GetProperty("samples").EnumerateArray())
        {
            var points = DoeFixtures.Points(sample.GetProperty("points"));
            var expected = sample.GetProperty("cd").GetDouble();
            Assert.True(Math.Abs(DesignMetrics.CenteredL2Discrepancy(points) - expected) <= 1e-12 * Math.Max(1, expected),
                $"{sample.GetProperty("name").GetString()}: scipy {expected}, ours {DesignMetrics.CenteredL2Discrepancy(points)}");
        }
    }

    [Fact]
    public void Our_Sobol_points_have_scipys_discrepancy()
    {
        // Source: as above, the "sobol 1024 x 10" sample: our own generator, then our discrepancy.
        var sample = DoeFixtures.Load("discrepancy_cd.json").GetProperty("samples")[0];
        Assert.Equal("sobol 1024 x 10", sample.GetProperty("name").GetString());
        Assert.Equal(sample.GetProperty("cd").GetDouble(), DesignMetrics.CenteredL2Discrepancy(SobolSequence.Generate(1024, 10)), 12);
    }

    [Fact]
    public void A_two_level_full_factorial_is_orthogonal_with_D_efficiency_one()
    {
        // Common practice: a 2^k factorial in ±1 units has X'X = N·I for the linear model.
        var space = DoeFixtures.Unit(3);
        var design = DesignBuilder.Build(space, new DesignSpec(DesignMethod.FullFactorial)).Value!.Matrix;
        var metrics = DesignMetrics.Evaluate(design, DesignModelKind.Interactions);
        Assert.Equal(8, metrics.Runs);
        Assert.All(metrics.Levels.Values, l => Assert.Equal(2, l));
        Assert.Equal(2.0, metrics.MinDistance, 12);
        Assert.Equal(0.0, metrics.MaxAbsCorrelation, 12);
        Assert.Equal(1.0, metrics.DEfficiency!.Value, 12);
        Assert.Equal(1.0, metrics.ConditionNumber!.Value, 9);
        Assert.Equal(7, metrics.ModelTerms);
    }

    [Fact]
    public void A_model_the_runs_cannot_estimate_has_no_D_efficiency()
    {
        var space = DoeFixtures.Unit(3);
        var design = DesignBuilder.Build(space, new DesignSpec(DesignMethod.FullFactorial)).Value!.Matrix;
        var metrics = DesignMetrics.Evaluate(design, DesignModelKind.Quadratic); // squares alias the intercept
        Assert.Null(metrics.DEfficiency);
        Assert.Null(metrics.ConditionNumber);
        Assert.Contains("cannot be estimated", DesignMetrics.Describe(metrics), StringComparison.Ordinal);
    }

    [Fact]
    public void Correlation_and_distance_follow_their_definitions()
    {
        var coded = Matrix<double>.Build.DenseOfArray(new double[,] { { -1, -1 }, { 0, 0.5 }, { 1, 1 } });
        Assert.Equal(Math.Sqrt(1 + 0.25), DesignMetrics.MinDistance(coded), 12);
        // Pearson r of (−1, 0, 1) and (−1, 0.5, 1): by hand, 2 / sqrt(2 · 2.1666…).
        Assert.Equal(2 / Math.Sqrt(2 * (13.0 / 6)), DesignMetrics.MaxAbsCorrelation(coded), 12);
    }
}
