using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Doe;
using Runfold.Shared.Optimization;
using Runfold.Shared.Studies;
using Runfold.Shared.Tests.Sensitivity;

namespace Runfold.Shared.Tests.Optimization;

public sealed class CandidateSearchTests
{
    private static readonly FactorSpace Space = FinStudy.Space;
    private static readonly DesignConstraints Constraints = FinStudy.Constraints;

    private static IReadOnlyList<ResponseObjective> Objectives(double pressureLimit = 60)
    {
        var responses = ResponseSet.Create([
            new ResponseSpec("thermal_resistance", ResponseGoal.Minimize),
            new ResponseSpec("pressure_drop", ResponseGoal.Minimize, Upper: pressureLimit, Weight: 0.5),
            new ResponseSpec("mass", ResponseGoal.Minimize, Weight: 0.5),
        ], Space).Value!;
        return
        [
            new ResponseObjective(responses[0], new FunctionSurrogate(Space, FinStudy.Resistance, x => 0.02 * FinStudy.Resistance(x)), 0.01),
            new ResponseObjective(responses[1], new FunctionSurrogate(Space, FinStudy.PressureDrop, _ => 2.0), 1),
            new ResponseObjective(responses[2], new FunctionSurrogate(Space, FinStudy.Mass), 5),
        ];
    }

    /// <summary>A shorter search for the checks where the quality of the optimum is not the point.</summary>
    private static readonly CandidateOptions Quick = new() { Generations = 30, EvolutionGenerations = 40 };

    private static Matrix<double> Runs() => UnitCube.ToCoded(Space, LatinHypercube.Maximin(24, Space.Count, seed: 1));

    [Fact]
    public void Candidates_are_distinct_feasible_ranked_and_take_their_factors_own_values()
    {
        var result = CandidateSearch.Find(Space, Objectives(), Runs(), Constraints);
        Assert.Equal(5, result.Candidates.Count);
        var minDistance = 0.1 * Math.Sqrt(Space.Count);
        for (var c = 0; c < result.Candidates.Count; c++)
        {
            var candidate = result.Candidates[c];
            Assert.Equal(c + 1, candidate.Rank);
            Assert.True(Constraints.IsFeasible([.. candidate.Natural]), $"candidate {c + 1} breaks the constraint");
            Assert.Equal(Math.Round(candidate.Natural[1]), candidate.Natural[1]);
            Assert.Contains(candidate.Natural[2], new[] { 0.0, 1.0 });
            Assert.Equal(Space[1].ToCoded(candidate.Natural[1]), candidate.Coded[1], 12);
            Assert.True(candidate.Factors["alloy"].IsLevel);
            Assert.InRange(candidate.Desirability, 0, 1);
            if (c > 0) Assert.True(candidate.Desirability <= result.Candidates[c - 1].Desirability);
            for (var other = 0; other < c; other++)
                Assert.True(Distance(candidate.Coded, result.Candidates[other].Coded) >= minDistance - 1e-12);
            // The prediction interval comes with every response that has one, the limit probability with the limited one.
            Assert.NotNull(candidate.Responses[0].Sd);
            Assert.Null(candidate.Responses[2].Sd);
            Assert.NotNull(candidate.Responses[1].LimitProbability);
            Assert.Null(candidate.Responses[0].LimitProbability);
            Assert.True(candidate.Responses[1].Mean <= 60 + 1e-9, "the hard limit on pressure drop holds for the predicted mean");
        }
        Assert.True(result.Candidates[0].Desirability > 0.3, $"best desirability {result.Candidates[0].Desirability:F3}");
        Assert.Contains(result.Candidates, c => c.ParetoRank == 1);
        Assert.Empty(result.Notes);
    }

    [Fact]
    public void The_best_candidate_is_at_least_as_desirable_as_every_spread_point()
    {
        // A brute-force check of the search: no point of a dense Sobol' sample of the feasible region beats it.
        var objectives = Objectives();
        var result = CandidateSearch.Find(Space, objectives, Runs(), Constraints, new CandidateOptions { Seed = 2 });
        var search = new SearchSpace(Space, Constraints);
        var runs = SearchSpace.Rows(Runs());
        var set = new ObjectiveSet(search, objectives, runs, search.Spread(512, 2));
        var dense = search.Spread(20_000, 9);
        var bestDense = set.Evaluate(dense).Desirability.Max();
        Assert.True(result.Candidates[0].Desirability >= bestDense - 1e-3,
            $"search {result.Candidates[0].Desirability:F4}, dense sample {bestDense:F4}");
    }

    [Fact]
    public void Extrapolation_is_flagged_by_the_distance_to_the_nearest_run()
    {
        // Runs only in the lower-left quarter of fin height and velocity; candidates far from them are flagged.
        var crowded = Matrix<double>.Build.DenseOfRowArrays(Enumerable.Range(0, 12).Select(i =>
            new[] { -1 + 0.05 * (i % 4), Space[1].ToCoded(10 + i), Space[2].ToCoded(i % 2), -1 + 0.05 * (i / 4) }).ToArray());
        var result = CandidateSearch.Find(Space, Objectives(), crowded, Constraints, Quick with { Count = 3 });
        Assert.All(result.Candidates, c =>
        {
            var nearest = Enumerable.Range(0, crowded.RowCount).Min(i => Distance(c.Coded, crowded.Row(i).ToArray()));
            Assert.Equal(nearest, c.NearestRunDistance, 12);
            Assert.Equal(nearest > result.ExtrapolationDistance, c.Extrapolating);
        });
        Assert.Contains(result.Candidates, c => c.Extrapolating);
        var fixedThreshold = CandidateSearch.Find(Space, Objectives(), crowded, Constraints, Quick with { Count = 3, ExtrapolationDistance = 100 });
        Assert.All(fixedThreshold.Candidates, c => Assert.False(c.Extrapolating));
    }

    [Fact]
    public void A_time_budget_scales_the_search_and_a_study_without_goals_gets_a_sentence()
    {
        var budgeted = CandidateSearch.Find(Space, Objectives(), Runs(), Constraints, new CandidateOptions { TimeBudget = TimeSpan.FromMilliseconds(300) });
        Assert.Equal(5, budgeted.Candidates.Count);
        Assert.True(budgeted.ParetoGenerations >= 3 && budgeted.EvolutionGenerations >= 1);

        var none = ResponseSet.Create([new ResponseSpec("mass")], Space).Value![0];
        var empty = CandidateSearch.Find(Space, [new ResponseObjective(none, new FunctionSurrogate(Space, FinStudy.Mass), 1)], Runs(), Constraints);
        Assert.Empty(empty.Candidates);
        Assert.Contains("goal", empty.Notes.Single(), StringComparison.Ordinal);
    }

    [Fact]
    public void An_unreachable_limit_is_said_and_the_candidates_come_as_close_as_they_can()
    {
        var result = CandidateSearch.Find(Space, Objectives(pressureLimit: 1), Runs(), Constraints, new CandidateOptions { Count = 2 });
        Assert.All(result.Candidates, c => Assert.Equal(0, c.Desirability));
        Assert.Contains(result.Notes, n => n.Contains("limit", StringComparison.Ordinal));
        // The closest the search gets: the pressure drop's minimum over the box is 2.5 Pa (10 fins, 1 m/s, 20 mm).
        Assert.True(result.Candidates[0].Responses[1].Mean < 4, $"closest pressure drop {result.Candidates[0].Responses[1].Mean:F2}");
    }

    [Fact]
    public void Same_seed_gives_the_same_candidates()
    {
        var one = CandidateSearch.Find(Space, Objectives(), Runs(), Constraints, Quick with { Seed = 4 });
        var two = CandidateSearch.Find(Space, Objectives(), Runs(), Constraints, Quick with { Seed = 4 });
        Assert.Equal(one.Candidates.SelectMany(c => c.Coded), two.Candidates.SelectMany(c => c.Coded));
    }

    [Fact]
    public void Kept_designs_stay_in_the_list_ranked_among_the_others_and_push_near_ones_aside()
    {
        var free = CandidateSearch.Find(Space, Objectives(), Runs(), Constraints, Quick);
        // Keep the free search's best design and a poor one (a corner of the box, all fins at their fewest).
        var best = free.Candidates[0].Coded.ToArray();
        var corner = Runs().Row(0).ToArray();
        var kept = CandidateSearch.Find(Space, Objectives(), Runs(), Constraints, Quick with { Keep = [best, corner] });
        Assert.Equal(free.Candidates.Count + 2, kept.Candidates.Count);
        Assert.Equal(Enumerable.Range(1, kept.Candidates.Count), kept.Candidates.Select(c => c.Rank));
        var first = Assert.Single(kept.Candidates, c => c.Kept == 0);
        var second = Assert.Single(kept.Candidates, c => c.Kept == 1);
        Assert.Equal(best, first.Coded);
        Assert.Equal(corner, second.Coded);
        Assert.Equal(free.Candidates[0].Desirability, first.Desirability, 12);
        // Ranked by desirability like the others, and no chosen design within the minimum distance of a kept one.
        Assert.All(kept.Candidates.Zip(kept.Candidates.Skip(1)), p => Assert.True(p.First.Desirability >= p.Second.Desirability));
        var minDistance = 0.1 * Math.Sqrt(Space.Count);
        foreach (var c in kept.Candidates.Where(c => c.Kept is null))
        {
            Assert.True(Distance(c.Coded, best) >= minDistance - 1e-12);
            Assert.True(Distance(c.Coded, corner) >= minDistance - 1e-12);
        }
        Assert.Throws<ArgumentException>(() => CandidateSearch.Find(Space, Objectives(), Runs(), Constraints, Quick with { Keep = [[0.0, 0.0]] }));
    }

    private static double Distance(IReadOnlyList<double> a, IReadOnlyList<double> b) =>
        Math.Sqrt(a.Zip(b, (x, y) => (x - y) * (x - y)).Sum());
}
