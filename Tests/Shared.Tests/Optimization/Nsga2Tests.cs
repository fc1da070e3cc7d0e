using Runfold.Shared.Optimization;
using Runfold.TestFunctions;

namespace Runfold.Shared.Tests.Optimization;

public sealed class Nsga2Tests
{
    private const int Variables = 30;

    /// <summary>The budget stated for both checks: Deb et al.'s population of 100 and their operator settings, run
    /// for 400 generations (40,100 evaluations).</summary>
    private static readonly Nsga2Options Budget = new() { PopulationSize = 100, Generations = 400, Seed = 1 };

    private static BoxProblem Zdt(Func<double[], (double F1, double F2)> f) => new(
        new double[Variables], [.. Enumerable.Repeat(1.0, Variables)], 2,
        (points, objectives, violations) =>
        {
            for (var i = 0; i < points.Count; i++)
            {
                var (f1, f2) = f(points[i]);
                objectives[i][0] = f1;
                objectives[i][1] = f2;
            }
        });

    [Fact]
    public void Zdt1_front_is_reached_within_a_generational_distance_of_1e_3()
    {
        // Source: ZDT1 (Zitzler, Deb & Thiele 2000), 30 variables; analytic front f2 = 1 − √f1, f1 ∈ [0, 1].
        var result = Nsga2.Minimize(Zdt(x => ZdtProblems.Zdt1(x)), Budget);
        var gd = GenerationalDistance(result, t => (t * t, 1 - t));
        Assert.True(gd < 1e-3, $"ZDT1 generational distance {gd:G3} after {result.Evaluations} evaluations");
        Assert.Equal(100, result.Front.Count);
        Assert.True(Spread(result) > 0.9, "the front should cover f1 from near 0 to near 1");
    }

    [Fact]
    public void Zdt2_front_is_reached_within_a_generational_distance_of_1e_3()
    {
        // Source: ZDT2 (Zitzler, Deb & Thiele 2000), 30 variables; analytic front f2 = 1 − f1², f1 ∈ [0, 1].
        var result = Nsga2.Minimize(Zdt(x => ZdtProblems.Zdt2(x)), Budget);
        var gd = GenerationalDistance(result, t => (t, 1 - t * t));
        Assert.True(gd < 1e-3, $"ZDT2 generational distance {gd:G3} after {result.Evaluations} evaluations");
        Assert.True(Spread(result) > 0.9, "the front should cover f1 from near 0 to near 1");
    }

    [Fact]
    public void Constrained_domination_keeps_the_population_feasible_and_the_seed_fixes_the_result()
    {
        // Minimise (x, y) subject to x + y ≥ 1 on [0, 1]²: the front is the segment x + y = 1.
        var problem = new BoxProblem([0, 0], [1, 1], 2, (points, objectives, violations) =>
        {
            for (var i = 0; i < points.Count; i++)
            {
                objectives[i][0] = points[i][0];
                objectives[i][1] = points[i][1];
                violations[i] = Math.Max(0, 1 - points[i][0] - points[i][1]);
            }
        });
        var options = new Nsga2Options { PopulationSize = 40, Generations = 100, Seed = 5 };
        var first = Nsga2.Minimize(problem, options);
        Assert.All(first.Violations, v => Assert.Equal(0, v));
        Assert.All(first.Front, i => Assert.InRange(first.Points[i][0] + first.Points[i][1], 1, 1.05));
        Assert.True(first.Front.Average(i => first.Points[i][0] + first.Points[i][1] - 1) < 0.01);
        Assert.True(first.Front.Count >= 30);
        var again = Nsga2.Minimize(problem, options);
        Assert.Equal(first.Points.SelectMany(p => p), again.Points.SelectMany(p => p));
    }

    /// <summary>Generational distance (Van Veldhuizen &amp; Lamont 1998) with p = 1: the mean Euclidean distance from
    /// each point of the final population to the analytic front, given as a curve over t ∈ [0, 1] (a dense scan, then
    /// golden-section refinement around the nearest sample).</summary>
    private static double GenerationalDistance(Nsga2Result result, Func<double, (double F1, double F2)> front)
    {
        const int samples = 20_000;
        var total = 0.0;
        foreach (var f in result.Objectives)
        {
            double Distance(double t)
            {
                var (a, b) = front(t);
                return Math.Sqrt((f[0] - a) * (f[0] - a) + (f[1] - b) * (f[1] - b));
            }
            var best = 0;
            for (var s = 1; s <= samples; s++)
                if (Distance((double)s / samples) < Distance((double)best / samples)) best = s;
            double low = Math.Max(0, (best - 1.0) / samples), high = Math.Min(1, (best + 1.0) / samples);
            var ratio = (Math.Sqrt(5) - 1) / 2;
            for (var i = 0; i < 60; i++)
            {
                var m1 = high - ratio * (high - low);
                var m2 = low + ratio * (high - low);
                if (Distance(m1) < Distance(m2)) high = m2;
                else low = m1;
            }
            total += Distance((low + high) / 2);
        }
        return total / result.Objectives.Count;
    }

    private static double Spread(Nsga2Result result) =>
        result.Objectives.Max(o => o[0]) - result.Objectives.Min(o => o[0]);
}
