using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Doe;
using Runfold.Shared.Modeling.GaussianProcess;
using Runfold.Shared.Optimization;
using Runfold.Shared.Studies;
using Runfold.TestFunctions;
using Xunit.Abstractions;

namespace Runfold.Shared.Tests.Optimization;

/// <summary>
/// The expected-improvement loop (Jones, Schonlau &amp; Welch 1998) on published test functions, as a team would run it:
/// fit a Gaussian process to the runs so far, propose a wave, run it, repeat. The Gaussian process starts each
/// likelihood search from the previous length scales (warm start) with a few random restarts every tenth fit.
/// </summary>
public sealed class ExpectedImprovementLoopTests(ITestOutputHelper output)
{
    private sealed record LoopResult(int Evaluations, double Best, bool Reached);

    private static FactorSpace SpaceOf(TestFunction function) => FactorSpace.Create(
        [.. Enumerable.Range(0, function.Dimension).Select(j => new FactorSpec($"x{j + 1}", Low: function.Lower[j], High: function.Upper[j]))]).Value!;

    /// <summary>Runs waves of <paramref name="batch"/> runs from an <paramref name="initial"/>-run maximin Latin
    /// hypercube until the best value is at most <paramref name="goal"/> or <paramref name="budget"/> evaluations are
    /// spent; the count includes the initial runs and whole waves.</summary>
    private static LoopResult Run(TestFunction function, int initial, int batch, double goal, int budget, int seed)
    {
        var space = SpaceOf(function);
        var unit = LatinHypercube.Maximin(initial, function.Dimension, seed);
        var rows = Enumerable.Range(0, initial).Select(i => Enumerable.Range(0, function.Dimension).Select(j => 2 * unit[i, j] - 1).ToArray()).ToList();
        var values = rows.Select(r => function.Evaluate(function.FromCoded(r))).ToList();
        var response = ResponseSet.Create([new ResponseSpec("f", ResponseGoal.Minimize)], space).Value![0];
        IReadOnlyList<double>? scales = null;
        var fit = 0;
        while (values.Min() > goal && values.Count + batch <= budget)
        {
            var x = Matrix<double>.Build.DenseOfRowArrays(rows);
            var gp = GaussianProcessModel.Fit(space, x, values, new GaussianProcessOptions
            {
                Kernel = CovarianceKernel.Matern52, InitialLengthScales = scales, Restarts = fit % 10 == 0 ? 3 : 0, Seed = seed + fit,
            });
            fit++;
            scales = gp.Hyperparameters.LengthScales;
            var wave = NextWave.Propose(space, [new ResponseObjective(response, gp, 0, values)], x, options: new NextWaveOptions
            {
                Count = batch, Response = "f", Seed = seed + fit,
            });
            Assert.Equal(batch, wave.Runs.Count);
            foreach (var run in wave.Runs)
            {
                rows.Add([.. run.Coded]);
                values.Add(function.Evaluate(function.FromCoded(run.Coded.ToArray())));
            }
        }
        return new LoopResult(values.Count, values.Min(), values.Min() <= goal);
    }

    /// <summary>Largest value of a two-input function on a 401 × 401 grid of its domain.</summary>
    private static double GridMaximum(TestFunction function)
    {
        var largest = double.NegativeInfinity;
        for (var i = 0; i <= 400; i++)
            for (var j = 0; j <= 400; j++)
                largest = Math.Max(largest, function.Evaluate(function.FromUnit([i / 400.0, j / 400.0])));
        return largest;
    }

    [Fact]
    public void Branin_is_minimised_within_1_percent_of_its_range_in_30_evaluations_and_batches_of_4_need_at_most_half_again_as_many()
    {
        // Source: Branin (VLSE; Dixon & Szegő 1978), minimum 0.397887; its range on the domain from a dense grid
        // (maximum ≈ 308.13 at (−5, 0)). Goal: within 1 % of the range above the minimum; initial design 8 runs
        // (maximin Latin hypercube). Two initial designs: the 8-run maximin search ends in only a few distinct designs
        // (seeds 3, 5 and 6 repeat seeds 1 and 2; seed 4's design already meets the goal without any wave).
        var branin = PublishedTestFunctions.Branin;
        var minimum = branin.KnownMinimum!.Value;
        var goal = minimum + 0.01 * (GridMaximum(branin) - minimum);
        foreach (var seed in new[] { 1, 2 })
        {
            var single = Run(branin, 8, 1, goal, 30, seed);
            output.WriteLine($"seed {seed}: batches of 1 reached {single.Best:F4} after {single.Evaluations} evaluations");
            Assert.True(single.Reached, $"seed {seed}: best {single.Best:F4} after {single.Evaluations} evaluations, goal {goal:F4}");
            var batched = Run(branin, 8, 4, goal, 8 + (int)Math.Ceiling(1.5 * (single.Evaluations - 8) / 4) * 4 + 40, seed);
            output.WriteLine($"seed {seed}: batches of 4 reached {batched.Best:F4} after {batched.Evaluations} evaluations");
            Assert.True(batched.Reached, $"seed {seed}: batches of 4 did not reach the goal ({batched.Best:F4})");
            Assert.True(batched.Evaluations <= 1.5 * single.Evaluations,
                $"seed {seed}: batches of 4 needed {batched.Evaluations} evaluations, batches of 1 {single.Evaluations}");
        }
    }

    [Fact]
    public void Hartmann6_is_minimised_within_2_percent_in_150_evaluations_from_most_initial_designs()
    {
        // Source: Hartmann 6-D (VLSE; Dixon & Szegő 1978), minimum −3.32237; its values lie in [−3.32237, 0), so 2 % of
        // |f*| is also 2 % of the range. Initial designs: 20-run maximin Latin hypercubes seeded 1 to 8; batches of 1.
        //
        // Expected improvement is not sure to find this minimum. Designs 1, 7 and 8 lead the loop into the basin of the
        // fourth term (local minimum −3.2032, 3.6 % above f*), which is nearly flat in x3 and x5 (exponents 0.05 and
        // 0.1), while the global basin is narrow in x5 (exponent 17). Fitted mostly to runs in the wide basin, the
        // Gaussian process takes length scales of about 11 and 8 (coded) in x3 and x5 and a process standard deviation
        // of about 0.4 around a mean of about −0.3, so at the global minimiser it predicts −0.35 ± 0.39 and expected
        // improvement of 1e-14 — the surrogate is sure nothing better exists, and the acquisition search is not at
        // fault: it finds what a 100,000-point search with twenty polished starts finds. Bounding or penalising the
        // length scales, an isotropic kernel, no trend, a −ln(−y) response, a minimum improvement ξ, and spending
        // picks on the largest variance or on random points (ε-greedy) all left these designs at −3.2032 within 150
        // evaluations; see DEVELOPERS.md. So the five designs that reach the goal must reach it, and the other three
        // must at least reach that local minimum (every design within 4 % of f*).
        var hartmann = PublishedTestFunctions.Hartmann6;
        var minimum = hartmann.KnownMinimum!.Value;
        var goal = minimum + 0.02 * Math.Abs(minimum);
        var mustReach = new[] { 2, 3, 4, 5, 6 };
        var failures = new List<string>();
        foreach (var seed in Enumerable.Range(1, 8))
        {
            var result = Run(hartmann, 20, 1, goal, 150, seed);
            output.WriteLine($"design {seed}: best {result.Best:F5} after {result.Evaluations} evaluations, {(result.Reached ? "goal reached" : "goal not reached")} (goal {goal:F5})");
            if (mustReach.Contains(seed) && !result.Reached)
                failures.Add($"design {seed}: best {result.Best:F5} after {result.Evaluations} evaluations, goal {goal:F5}");
            if (result.Best > minimum + 0.04 * Math.Abs(minimum))
                failures.Add($"design {seed}: best {result.Best:F5} is not within 4 % of the minimum");
        }
        Assert.True(failures.Count == 0, string.Join("; ", failures));
    }
}
