// Candidate designs on the surrogates: the largest overall desirability (Derringer & Suich 1980) by differential
// evolution (Storn & Price 1997) and quasi-Newton polish, and the Pareto set by NSGA-II (Deb et al. 2002).
using System.Diagnostics;
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Optimization;

/// <summary>How many candidates, how distinct, and how much search.</summary>
public sealed record CandidateOptions
{
    public int Count { get; init; } = 5;

    /// <summary>The smallest coded (Euclidean) distance between two candidates; null: 0.1·√k, a twentieth of the
    /// box's half-diagonal.</summary>
    public double? MinDistance { get; init; }

    /// <summary>A candidate farther than this (coded, Euclidean) from its nearest run is flagged as extrapolating;
    /// null: the largest distance from a run to its nearest other run, i.e. farther from the data than any run is
    /// from the rest (our own rule).</summary>
    public double? ExtrapolationDistance { get; init; }

    public int Seed { get; init; } = 1;

    /// <summary>When set, the population sizes and generations are scaled to the measured cost of one evaluation so
    /// the whole search fits this time (the result then depends on the machine's speed); every stage also stops at
    /// its share of the time.</summary>
    public TimeSpan? TimeBudget { get; init; }

    /// <summary>NSGA-II population and generations without a time budget (at most these with one).</summary>
    public int PopulationSize { get; init; } = 100;

    public int Generations { get; init; } = 100;

    /// <summary>Generations of the differential evolution for the largest desirability without a time budget.</summary>
    public int EvolutionGenerations { get; init; } = 150;

    /// <summary>How many of the best distinct designs get a quasi-Newton polish of their continuous factors.</summary>
    public int Polish { get; init; } = 3;

    /// <summary>Spread feasible points that seed the searches and set the span of each response.</summary>
    public int SpreadPoints { get; init; } = 512;

    /// <summary>Designs (coded rows) that stay in the list whatever their rank — the candidates being verified —,
    /// each described and ranked like the others, on top of the <see cref="Count"/> the search chooses; a chosen
    /// design closer than the minimum distance to one of them gives way to it. <see cref="Candidate.Kept"/> says
    /// which one a candidate is.</summary>
    public IReadOnlyList<IReadOnlyList<double>> Keep { get; init; } = [];

    public static CandidateOptions Default { get; } = new();

    internal void Check()
    {
        if (Count < 1) throw new ArgumentException("Ask for at least one candidate.", nameof(Count));
        if (MinDistance is { } d && !(d >= 0)) throw new ArgumentException("The minimum distance cannot be negative.", nameof(MinDistance));
        if (ExtrapolationDistance is { } e && !(e > 0)) throw new ArgumentException("The extrapolation distance must be positive.", nameof(ExtrapolationDistance));
        if (TimeBudget is { } budget && budget <= TimeSpan.Zero) throw new ArgumentException("The time budget must be positive.", nameof(TimeBudget));
        if (PopulationSize < 4 || Generations < 0 || EvolutionGenerations < 0 || Polish < 0 || SpreadPoints < 16)
            throw new ArgumentException("The search sizes are out of range.", nameof(PopulationSize));
        if (Keep is null || Keep.Any(k => k is null || k.Any(v => !double.IsFinite(v))))
            throw new ArgumentException("Every design to keep must be a row of finite coded values.", nameof(Keep));
    }
}

/// <summary>One response at a candidate: predicted mean and standard deviation (null when the surrogate has none),
/// its desirability (null for a response without a goal), and the probability of meeting its limits (null without
/// limits; for a range goal, of lying in the band).</summary>
public sealed record CandidateResponse(string Response, double Mean, double? Sd, double? Desirability, double? LimitProbability);

/// <summary>A ranked candidate design: a prediction of the surrogates until a verification run confirms it.</summary>
public sealed record Candidate(
    int Rank,
    IReadOnlyList<double> Coded,
    IReadOnlyList<double> Natural,
    IReadOnlyDictionary<string, FactorValue> Factors,
    IReadOnlyList<CandidateResponse> Responses,
    double Desirability,
    int ParetoRank,
    bool Extrapolating,
    double NearestRunDistance)
{
    /// <summary>The position in <see cref="CandidateOptions.Keep"/> of the design this candidate is; null for a
    /// design the search chose.</summary>
    public int? Kept { get; init; }
}

/// <summary>The ranked candidates and what the search did.</summary>
public sealed record CandidateSearchResult(
    IReadOnlyList<Candidate> Candidates,
    int Evaluations,
    int ParetoGenerations,
    int EvolutionGenerations,
    double ExtrapolationDistance,
    TimeSpan Elapsed,
    IReadOnlyList<string> Notes);

public static class CandidateSearch
{
    /// <summary>
    /// Finds distinct candidate designs on the surrogates, ranked by overall desirability and then by Pareto rank.
    /// Spread feasible points seed a differential evolution that maximises the desirability (walking towards the
    /// region where every d &gt; 0 while none is) and, with two goals or more, an NSGA-II run on the goals with
    /// hard limits and factor constraints as constraints; the best few distinct designs get a quasi-Newton polish.
    /// Integer and categorical factors take their own values throughout, and every candidate satisfies the factor
    /// constraints.
    /// </summary>
    public static CandidateSearchResult Find(FactorSpace space, IReadOnlyList<ResponseObjective> objectives, Matrix<double> codedRuns,
        DesignConstraints? constraints = null, CandidateOptions? options = null, CancellationToken cancellation = default)
    {
        ObjectiveSet.CheckInputs(space, objectives, codedRuns, requireObjectives: true);
        options ??= CandidateOptions.Default;
        options.Check();
        var watch = Stopwatch.StartNew();
        var notes = new List<string>();
        var search = new SearchSpace(space, constraints ?? DesignConstraints.None);
        var runs = SearchSpace.Rows(codedRuns);
        var extrapolation = options.ExtrapolationDistance ?? FillDistance(runs, space.Count);
        if (!objectives.Any(o => o.HasGoal || o.HasHardLimit))
        {
            notes.Add("No response has a goal or a limit, so there is nothing to rank designs by; give a response a goal.");
            return new([], 0, 0, 0, extrapolation, watch.Elapsed, notes);
        }
        var spread = search.Spread(options.SpreadPoints, options.Seed);
        if (spread.Count == 0)
        {
            notes.Add("No setting of the factors satisfies every constraint among the points tried, so no candidate can be placed.");
            return new([], 0, 0, 0, extrapolation, watch.Elapsed, notes);
        }

        var set = new ObjectiveSet(search, objectives, runs, spread);
        var before = watch.Elapsed;
        var spreadEvaluation = set.Evaluate(spread);
        var secondsPerPoint = Math.Max((watch.Elapsed - before).TotalSeconds / spread.Count, 1e-9);
        var evaluations = 2 * spread.Count + runs.Count;
        var plan = Plan(options, set.GoalResponses.Length, space.Count, secondsPerPoint, watch.Elapsed);

        var seeds = Enumerable.Range(0, spread.Count)
            .OrderByDescending(i => spreadEvaluation.FactorViolation[i] == 0)
            .ThenByDescending(i => spreadEvaluation.Fitness[i]).Select(i => spread[i]).ToList();
        // The pool of designs to rank: the best spread points, then what the searches end with (ranking is quadratic
        // in the pool's size, so the rest of the spread points stay out).
        var pool = seeds.Take(64).ToList();

        var evolution = DifferentialEvolution.Minimize(
            Problem(search, set, 1, (e, i) => [-e.Fitness[i]], (e, i) => e.FactorViolation[i]),
            new DifferentialEvolutionOptions
            {
                PopulationSize = plan.EvolutionPopulation, Generations = plan.EvolutionGenerations, Seed = options.Seed,
                TimeLimit = plan.EvolutionTime,
            },
            seeds.Take(plan.EvolutionPopulation / 2).ToList(), cancellation);
        evaluations += evolution.Evaluations;
        pool.AddRange(evolution.Points);

        var paretoGenerations = 0;
        if (set.GoalResponses.Length >= 2)
        {
            var best = evolution.Points[evolution.Best];
            var pareto = Nsga2.Minimize(GoalProblem(search, set),
                new Nsga2Options
                {
                    PopulationSize = plan.ParetoPopulation, Generations = plan.ParetoGenerations, Seed = options.Seed,
                    TimeLimit = plan.ParetoTime,
                },
                [best, .. seeds.Take(plan.ParetoPopulation / 2)], cancellation);
            evaluations += pareto.Evaluations;
            paretoGenerations = pareto.Generations;
            pool.AddRange(pareto.Points);
        }

        var minDistance = options.MinDistance ?? 0.1 * Math.Sqrt(space.Count);
        foreach (var keep in options.Keep)
            if (keep.Count != space.Count)
                throw new ArgumentException($"A design to keep has {keep.Count} values for {space.Count} factors.", nameof(options));
        var keptFrom = pool.Count;
        pool.AddRange(options.Keep.Select(k => k.ToArray()));
        var kept = pool.GetRange(keptFrom, options.Keep.Count);
        int? KeptAt(int i) => i >= keptFrom && i < keptFrom + kept.Count ? i - keptFrom : null;
        var evaluation = set.Evaluate(pool);
        evaluations += pool.Count;
        var order = Order(evaluation);
        var polished = new List<double[]>();
        foreach (var i in order)
        {
            if (polished.Count >= options.Polish || (plan.Deadline is { } deadline && watch.Elapsed > deadline)) break;
            if (KeptAt(i) is not null || evaluation.FactorViolation[i] > 0 || SearchSpace.Nearest(pool[i], polished) < minDistance) continue;
            cancellation.ThrowIfCancellationRequested();
            var (point, _) = LocalPolish.Maximize(search, pool[i], points =>
            {
                var e = set.Evaluate(points);
                evaluations += points.Count;
                return [.. Enumerable.Range(0, points.Count).Select(p => e.FactorViolation[p] > 0 ? double.NegativeInfinity : e.Fitness[p])];
            }, plan.PolishIterations, cancellation);
            polished.Add(point);
        }
        if (polished.Count > 0)
        {
            pool.AddRange(polished);
            evaluation = set.Evaluate(pool);
            evaluations += pool.Count;
            order = Order(evaluation);
        }

        // In rank order: every kept design, and the best distinct feasible designs of the search, none of them
        // closer than the minimum distance to a kept design or to one chosen before.
        var chosen = new List<int>();
        var searched = 0;
        foreach (var i in order)
        {
            if (KeptAt(i) is not null)
            {
                chosen.Add(i);
                continue;
            }
            if (searched == options.Count) continue;
            if (evaluation.FactorViolation[i] > 0) continue;
            if (chosen.Any(c => SearchSpace.Distance(pool[c], pool[i]) < minDistance) || SearchSpace.Nearest(pool[i], kept) < minDistance) continue;
            chosen.Add(i);
            searched++;
        }
        if (searched < options.Count)
            notes.Add($"Only {searched} designs at least {minDistance:G3} apart (coded) were found; lower the minimum distance for more.");
        if (chosen.Count > 0 && chosen.All(i => evaluation.Desirability[i] == 0))
            notes.Add("No design is predicted to meet every limit and goal range; the candidates are the closest the search found.");
        var ranks = ParetoRanks(evaluation);
        var candidates = Describe(space, set, pool, chosen, evaluation, ranks, runs, extrapolation)
            .Select((c, n) => c with { Kept = KeptAt(chosen[n]) }).ToList();
        return new CandidateSearchResult(candidates, evaluations, paretoGenerations, evolution.Generations, extrapolation, watch.Elapsed, notes);
    }

    /// <summary>Pool positions by overall desirability (descending), Pareto rank, then fitness.</summary>
    private static List<int> Order(Evaluation evaluation)
    {
        var ranks = ParetoRanks(evaluation);
        return [.. Enumerable.Range(0, evaluation.Count)
            .OrderByDescending(i => evaluation.Desirability[i])
            .ThenBy(i => ranks[i])
            .ThenByDescending(i => evaluation.Fitness[i])
            .ThenBy(i => i)];
    }

    private static int[] ParetoRanks(Evaluation evaluation) =>
        Sorting.Rank(evaluation.Goals, [.. Enumerable.Range(0, evaluation.Count).Select(i => evaluation.FactorViolation[i] + evaluation.LimitViolation[i])]);

    /// <summary>The goals as objectives to minimise, with the hard limits and factor constraints as the violation.</summary>
    internal static BoxProblem GoalProblem(SearchSpace search, ObjectiveSet set) =>
        Problem(search, set, set.GoalResponses.Length, (e, i) => e.Goals[i], (e, i) => e.FactorViolation[i] + e.LimitViolation[i]);

    private static BoxProblem Problem(SearchSpace search, ObjectiveSet set, int objectives, Func<Evaluation, int, double[]> values,
        Func<Evaluation, int, double> violation) =>
        new(search.Lower, search.Upper, objectives, (points, into, violations) =>
        {
            var e = set.Evaluate(points);
            for (var i = 0; i < points.Count; i++)
            {
                var v = values(e, i);
                for (var m = 0; m < objectives; m++) into[i][m] = v[m];
                violations[i] = violation(e, i);
            }
        }, search.Repair);

    private sealed record SearchPlan(
        int EvolutionPopulation, int EvolutionGenerations, TimeSpan? EvolutionTime,
        int ParetoPopulation, int ParetoGenerations, TimeSpan? ParetoTime,
        int PolishIterations, TimeSpan? Deadline);

    /// <summary>
    /// The sizes of each stage. Without a budget: the options. With one: what is left of it after the first
    /// evaluations is shared 30 % evolution, 55 % NSGA-II (when there are two goals or more; else the evolution gets
    /// it), 15 % polish, each turned into point evaluations by the measured cost per point.
    /// </summary>
    private static SearchPlan Plan(CandidateOptions options, int goals, int factors, double secondsPerPoint, TimeSpan elapsed)
    {
        var evolutionPopulation = Math.Clamp(10 * factors, 20, 60);
        if (options.TimeBudget is not { } budget)
            return new(evolutionPopulation, options.EvolutionGenerations, null, options.PopulationSize, options.Generations, null, 30, null);
        var left = Math.Max((budget - elapsed).TotalSeconds, 0) * 0.9;
        var paretoShare = goals >= 2 ? 0.55 : 0;
        var evolutionSeconds = left * (0.85 - paretoShare);
        var paretoSeconds = left * paretoShare;
        var evolutionGenerations = Math.Clamp((int)(evolutionSeconds / secondsPerPoint / evolutionPopulation), 5, Math.Max(options.EvolutionGenerations, 5));
        var paretoPopulation = options.PopulationSize;
        // Sorting the population costs about as much again as evaluating it when the surrogates are cheap.
        var paretoPoints = paretoSeconds / (2 * secondsPerPoint);
        while (paretoPopulation > 20 && paretoPoints / paretoPopulation < 20) paretoPopulation -= 10;
        paretoPopulation -= paretoPopulation % 2;
        var paretoGenerations = Math.Clamp((int)(paretoPoints / paretoPopulation), 3, Math.Max(options.Generations, 3));
        var polishIterations = Math.Clamp((int)(left * 0.15 / secondsPerPoint / Math.Max(options.Polish, 1) / (factors + 1) / 3), 2, 30);
        return new(evolutionPopulation, evolutionGenerations, TimeSpan.FromSeconds(evolutionSeconds),
            paretoPopulation, paretoGenerations, TimeSpan.FromSeconds(paretoSeconds), polishIterations, budget * 0.95);
    }

    /// <summary>The largest distance from a run to its nearest other run (coded); √k/2 with fewer than two runs.</summary>
    internal static double FillDistance(IReadOnlyList<double[]> runs, int factors)
    {
        if (runs.Count < 2) return Math.Sqrt(factors) / 2;
        var largest = 0.0;
        for (var i = 0; i < runs.Count; i++)
        {
            var nearest = double.PositiveInfinity;
            for (var j = 0; j < runs.Count; j++)
                if (j != i) nearest = Math.Min(nearest, DesignMetrics.SquaredDistance(runs[i], runs[j]));
            largest = Math.Max(largest, nearest);
        }
        return largest > 0 ? Math.Sqrt(largest) : Math.Sqrt(factors) / 2;
    }

    private static List<Candidate> Describe(FactorSpace space, ObjectiveSet set, List<double[]> pool, List<int> chosen, Evaluation evaluation,
        int[] ranks, List<double[]> runs, double extrapolation)
    {
        var points = chosen.Select(i => pool[i]).ToList();
        var matrix = SearchSpace.ToMatrix(points, space.Count);
        var predictions = set.Objectives.Select(o => o.Surrogate.Predict(matrix)).ToArray();
        var candidates = new List<Candidate>(chosen.Count);
        for (var c = 0; c < chosen.Count; c++)
        {
            var i = chosen[c];
            var responses = new List<CandidateResponse>(set.Objectives.Count);
            for (var r = 0; r < set.Objectives.Count; r++)
            {
                var objective = set.Objectives[r];
                var mean = predictions[r].Mean[c];
                var sd = predictions[r].StandardDeviation?[c];
                responses.Add(new CandidateResponse(objective.Name, mean, sd,
                    objective.HasGoal ? set.Functions[r].Evaluate(mean) : null,
                    objective.LimitProbability(mean, sd)));
            }
            var natural = space.FromCoded(pool[i]);
            var nearest = SearchSpace.Nearest(pool[i], runs);
            candidates.Add(new Candidate(c + 1, pool[i], natural, space.ToValues(natural), responses, evaluation.Desirability[i], ranks[i],
                double.IsFinite(nearest) && nearest > extrapolation, double.IsFinite(nearest) ? nearest : double.NaN));
        }
        return candidates;
    }
}
