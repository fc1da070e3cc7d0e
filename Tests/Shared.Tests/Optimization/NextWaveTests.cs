using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Doe;
using Runfold.Shared.Modeling.GaussianProcess;
using Runfold.Shared.Optimization;
using Runfold.Shared.Studies;
using Runfold.Shared.Tests.Sensitivity;

namespace Runfold.Shared.Tests.Optimization;

public sealed class NextWaveTests
{
    private static readonly FactorSpace Space = FinStudy.Space;
    private static readonly DesignConstraints Constraints = FinStudy.Constraints;

    private static (Matrix<double> Runs, IReadOnlyList<ResponseObjective> Objectives) Study()
    {
        var runs = UnitCube.ToCoded(Space, LatinHypercube.Maximin(30, Space.Count, seed: 3));
        var responses = ResponseSet.Create([
            new ResponseSpec("thermal_resistance", ResponseGoal.Minimize),
            new ResponseSpec("mass", ResponseGoal.Minimize, Upper: 150, Weight: 0.5),
        ], Space).Value!;
        var objectives = new List<ResponseObjective>();
        foreach (var (response, f) in new[] { (responses[0], (Func<double[], double>)FinStudy.Resistance), (responses[1], FinStudy.Mass) })
        {
            var y = Enumerable.Range(0, runs.RowCount).Select(i => f(Space.FromCoded(runs.Row(i).ToArray()))).ToArray();
            var gp = GaussianProcessModel.Fit(Space, runs, y, new GaussianProcessOptions { Restarts = 1 });
            objectives.Add(new ResponseObjective(response, gp, 0, y));
        }
        return (runs, objectives);
    }

    private static void AssertValidRuns(NextWaveResult wave, Matrix<double> runs, int count)
    {
        Assert.Equal(count, wave.Runs.Count);
        var all = SearchSpace.Rows(runs);
        foreach (var run in wave.Runs)
        {
            Assert.True(Constraints.IsFeasible([.. run.Natural]), "a proposed run breaks the constraint");
            Assert.Equal(Math.Round(run.Natural[1]), run.Natural[1]);
            Assert.Contains(run.Natural[2], new[] { 0.0, 1.0 });
            Assert.Equal(Space[1].ToCoded(run.Natural[1]), run.Coded[1], 12);
            Assert.All(run.Coded, c => Assert.InRange(c, -1, 1));
            Assert.False(string.IsNullOrWhiteSpace(run.Reason));
            Assert.True(SearchSpace.Nearest([.. run.Coded], all) > 1e-6, "a proposed run repeats an existing one");
            all.Add([.. run.Coded]);
        }
    }

    [Fact]
    public void Expected_improvement_on_the_desirability_proposes_a_feasible_batch_of_distinct_runs()
    {
        var (runs, objectives) = Study();
        var wave = NextWave.Propose(Space, objectives, runs, Constraints, new NextWaveOptions { Count = 4 });
        AssertValidRuns(wave, runs, 4);
        Assert.Contains("overall desirability", wave.Runs[0].Reason, StringComparison.Ordinal);
        Assert.Contains("kriging believer", wave.Runs[1].Reason, StringComparison.Ordinal);
        Assert.Empty(wave.Notes);
        Assert.Equal(4, wave.Coded(Space.Count).RowCount);
    }

    [Fact]
    public void Expected_improvement_on_one_response_and_the_constant_liar_spread_the_batch()
    {
        var (runs, objectives) = Study();
        var believer = NextWave.Propose(Space, objectives, runs, Constraints, new NextWaveOptions { Count = 3, Response = "thermal_resistance" });
        var liar = NextWave.Propose(Space, objectives, runs, Constraints,
            new NextWaveOptions { Count = 3, Response = "THERMAL_RESISTANCE", Heuristic = BatchHeuristic.ConstantLiar });
        AssertValidRuns(believer, runs, 3);
        AssertValidRuns(liar, runs, 3);
        Assert.Contains("in thermal_resistance", believer.Runs[0].Reason, StringComparison.Ordinal);
        Assert.Contains("constant liar", liar.Runs[2].Reason, StringComparison.Ordinal);
        // The first pick does not depend on the heuristic; later ones do.
        Assert.Equal(believer.Runs[0].Coded, liar.Runs[0].Coded);
        // The best so far is observed: the expected improvement is positive at the first pick.
        Assert.True(believer.Runs[0].Score > 0);
    }

    [Fact]
    public void Largest_variance_goes_where_the_surrogates_are_unsure_and_conditioning_moves_later_picks_away()
    {
        var (runs, objectives) = Study();
        var wave = NextWave.Propose(Space, objectives, runs, Constraints, new NextWaveOptions { Count = 4, Criterion = InfillCriterion.Variance });
        AssertValidRuns(wave, runs, 4);
        Assert.Contains("uncertainty", wave.Runs[0].Reason, StringComparison.Ordinal);
        var picks = wave.Runs.Select(r => r.Coded.ToArray()).ToList();
        for (var i = 0; i < picks.Count; i++)
            for (var j = 0; j < i; j++)
                Assert.True(SearchSpace.Distance(picks[i], picks[j]) > 0.2, $"picks {i + 1} and {j + 1} are {SearchSpace.Distance(picks[i], picks[j]):F3} apart");
    }

    [Fact]
    public void Maximin_fill_places_runs_far_from_the_old_ones()
    {
        var (runs, objectives) = Study();
        var wave = NextWave.Propose(Space, objectives, runs, Constraints, new NextWaveOptions { Count = 5, Criterion = InfillCriterion.Maximin });
        AssertValidRuns(wave, runs, 5);
        Assert.All(wave.Runs, r => Assert.StartsWith("space filling", r.Reason, StringComparison.Ordinal));
        Assert.All(wave.Runs, r => Assert.True(r.Score > 0.3, $"nearest run at {r.Score:F3}"));
    }

    [Fact]
    public void A_response_without_goal_falls_back_to_variance_and_an_unknown_name_is_refused()
    {
        var (runs, objectives) = Study();
        var plain = objectives[1] with { Response = objectives[1].Response with { Goal = ResponseGoal.None, Upper = null } };
        var wave = NextWave.Propose(Space, [objectives[0], plain], runs, Constraints, new NextWaveOptions { Count = 1, Response = "mass" });
        Assert.Single(wave.Runs);
        Assert.Contains("no goal", wave.Notes.Single(), StringComparison.Ordinal);
        var error = Assert.Throws<ArgumentException>(() =>
            NextWave.Propose(Space, objectives, runs, Constraints, new NextWaveOptions { Response = "pressure" }));
        Assert.Contains("thermal_resistance, mass", error.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Verification_runs_repeat_the_candidates_and_compare_with_the_cross_validated_error()
    {
        var (runs, objectives) = Study();
        var candidates = CandidateSearch.Find(Space, objectives, runs, Constraints, new CandidateOptions { Count = 2, Generations = 30, EvolutionGenerations = 40 }).Candidates;
        var verify = NextWave.Verify(Space, candidates);
        Assert.Equal(2, verify.Count);
        Assert.Equal(candidates[0].Coded, verify[0].Coded);
        Assert.Contains("candidate 1", verify[0].Reason, StringComparison.Ordinal);

        var inside = Verification.Compare(predictedMean: 0.52, observed: 0.55, cvRmse: 0.02);
        Assert.Equal(0.03, inside.Error, 12);
        Assert.True(inside.WithinCvError);
        var outside = Verification.Compare(0.52, 0.55, 0.02, coverage: 1);
        Assert.False(outside.WithinCvError);
        Assert.Throws<ArgumentException>(() => Verification.Compare(double.NaN, 1, 1));
    }

    [Fact]
    public void A_surrogate_that_cannot_take_fantasised_runs_keeps_the_picks_apart()
    {
        var (runs, objectives) = Study();
        var fixedSd = objectives[0] with { Surrogate = new FunctionSurrogate(Space, FinStudy.Resistance, _ => 0.05) };
        var wave = NextWave.Propose(Space, [fixedSd], runs, Constraints, new NextWaveOptions { Count = 3, Response = "thermal_resistance" });
        AssertValidRuns(wave, runs, 3);
        Assert.Contains("apart", wave.Notes.Single(), StringComparison.Ordinal);
        var picks = wave.Runs.Select(r => r.Coded.ToArray()).ToList();
        Assert.True(SearchSpace.Distance(picks[0], picks[1]) >= 0.2 - 1e-9);
    }

    [Fact]
    public void Expected_improvement_too_small_for_double_precision_still_places_the_run_where_it_is_largest()
    {
        // A surrogate sure that nothing beats the best run: its mean lies 39 to 40 standard deviations above the best
        // observed value, so EI underflows to 0 everywhere, but ln EI still ranks the points by their standard
        // deviation, which grows with fin height (20 to 60 mm): the pick goes to the tallest fins, and its reason says so.
        var (runs, objectives) = Study();
        var best = objectives[0].Observed!.Min();
        var sure = objectives[0] with { Surrogate = new FunctionSurrogate(Space, _ => best + 1, x => 1 / (40 - (x[0] - 20) / 40)) };
        var wave = NextWave.Propose(Space, [sure], runs, Constraints, new NextWaveOptions { Count = 1, Response = "thermal_resistance" });
        AssertValidRuns(wave, runs, 1);
        var run = wave.Runs.Single();
        Assert.StartsWith("expected improvement", run.Reason, StringComparison.Ordinal);
        Assert.Contains("almost no chance of a better value anywhere", run.Reason, StringComparison.Ordinal);
        Assert.Equal(0, run.Score);
        Assert.True(run.Coded[0] > 0.9, $"fin height at {run.Coded[0]:F3} (coded)");

        // No uncertainty at all and no predicted gain: nothing to rank, so the run fills the largest gap.
        var certain = objectives[0] with { Surrogate = new FunctionSurrogate(Space, _ => best + 1, _ => 0) };
        var gap = NextWave.Propose(Space, [certain], runs, Constraints, new NextWaveOptions { Count = 1, Response = "thermal_resistance" });
        AssertValidRuns(gap, runs, 1);
        Assert.Contains("fills the largest gap", gap.Runs.Single().Reason, StringComparison.Ordinal);
    }
}
