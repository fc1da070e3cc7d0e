using System.Text.Json;
using Runfold.Shared.Optimization;

namespace Runfold.Shared.Tests.Optimization;

public sealed class ExpectedImprovementTests
{
    private sealed record LogHCase(double Z, double LogH);

    private sealed record LogHFile(string Generator, LogHCase[] Cases);

    private static LogHFile Fixture() => JsonSerializer.Deserialize<LogHFile>(
        File.ReadAllText(Path.Combine(AppContext.BaseDirectory, "Fixtures", "optimization", "log_expected_improvement.json")),
        new JsonSerializerOptions { PropertyNameCaseInsensitive = true })!;

    [Fact]
    public void The_log_of_expected_improvement_matches_scipy_down_to_a_thousand_standard_deviations_below_the_best()
    {
        // Source: Fixtures/optimization/log_expected_improvement.json from make_optimization_fixtures.py (scipy.stats.norm
        // and scipy.special.erfcx); EI = σ·h(z), h(z) = zΦ(z) + φ(z) (Jones, Schonlau & Welch 1998, eq. 15).
        var cases = Fixture().Cases;
        Assert.Equal(24, cases.Length);
        foreach (var c in cases)
        {
            var logH = ExpectedImprovement.LogH(c.Z);
            Assert.True(Math.Abs(logH - c.LogH) <= 1e-10 * Math.Max(1, Math.Abs(c.LogH)), $"z = {c.Z}: {logH:R}, scipy {c.LogH:R}");
            // EI itself: σ = 2, mean 1, best 1 + 2z (the improvement of a minimised response).
            Assert.Equal(Math.Log(2) + c.LogH, ExpectedImprovement.LogBelowBest(1, 2, 1 + 2 * c.Z), 1e-9 * Math.Max(1, Math.Abs(c.LogH)));
            Assert.Equal(Math.Log(2) + c.LogH, ExpectedImprovement.LogAboveBest(1, 2, 1 - 2 * c.Z), 1e-9 * Math.Max(1, Math.Abs(c.LogH)));
        }
    }

    [Fact]
    public void The_log_agrees_with_the_improvement_where_that_is_accurate_and_stays_finite_where_it_underflows()
    {
        foreach (var z in new[] { 4.0, 1.5, 0.0, -0.7, -1.0, -2.5, -4.0 })
        {
            var ei = ExpectedImprovement.BelowBest(3, 0.5, 3 + 0.5 * z);
            Assert.Equal(Math.Log(ei), ExpectedImprovement.LogBelowBest(3, 0.5, 3 + 0.5 * z), 1e-9);
        }
        // At 40 standard deviations the improvement is 0 in double precision; its logarithm is still ordered.
        Assert.Equal(0, ExpectedImprovement.BelowBest(0, 1, -40));
        var farther = ExpectedImprovement.LogBelowBest(0, 1, -41);
        var nearer = ExpectedImprovement.LogBelowBest(0, 1, -40);
        Assert.True(double.IsFinite(farther) && farther < nearer);
        // No uncertainty: the plain gain, or no improvement at all.
        Assert.Equal(Math.Log(0.25), ExpectedImprovement.LogBelowBest(1, 0, 1.25), 14);
        Assert.Equal(double.NegativeInfinity, ExpectedImprovement.LogBelowBest(1, 0, 0.5));
    }
}
