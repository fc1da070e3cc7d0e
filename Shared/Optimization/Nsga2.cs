// NSGA-II (Deb, Pratap, Agarwal & Meyarivan 2002, "A fast and elitist multiobjective genetic algorithm: NSGA-II",
// IEEE Trans. Evol. Comput. 6(2)) with simulated binary crossover and polynomial mutation (Deb & Agrawal 1995).
using System.Diagnostics;

namespace Runfold.Shared.Optimization;

/// <summary>Evaluates a batch of points at once: one row of <paramref name="objectives"/> (values to minimise) and
/// one constraint violation (0 when feasible) per point.</summary>
public delegate void BatchEvaluation(IReadOnlyList<double[]> points, double[][] objectives, double[] violations);

/// <summary>A problem on a box: bounds, the number of objectives, the batch evaluation and an optional repair that
/// snaps a point in place (integer and categorical factors).</summary>
public sealed record BoxProblem(double[] Lower, double[] Upper, int Objectives, BatchEvaluation Evaluate, Action<double[]>? Repair = null)
{
    public int Dimension => Lower.Length;

    internal void Check()
    {
        if (Lower.Length == 0 || Lower.Length != Upper.Length)
            throw new ArgumentException("The bounds need one lower and one upper value per variable.", nameof(Lower));
        for (var j = 0; j < Lower.Length; j++)
            if (!(Upper[j] > Lower[j])) throw new ArgumentException($"Variable {j + 1} has an empty range.", nameof(Upper));
        if (Objectives < 1) throw new ArgumentException("At least one objective is needed.", nameof(Objectives));
    }

    /// <summary>The given points (clamped to the box and repaired, at most <paramref name="count"/>) filled up with
    /// uniform random points.</summary>
    internal List<double[]> StartingPoints(IReadOnlyList<double[]>? initial, int count, Random random)
    {
        var points = new List<double[]>(count);
        foreach (var start in initial ?? [])
        {
            if (points.Count == count) break;
            var copy = new double[Dimension];
            for (var j = 0; j < Dimension; j++) copy[j] = Math.Clamp(start[j], Lower[j], Upper[j]);
            Repair?.Invoke(copy);
            points.Add(copy);
        }
        while (points.Count < count)
        {
            var x = new double[Dimension];
            for (var j = 0; j < Dimension; j++) x[j] = Lower[j] + random.NextDouble() * (Upper[j] - Lower[j]);
            Repair?.Invoke(x);
            points.Add(x);
        }
        return points;
    }

    internal (double[][] Objectives, double[] Violations) EvaluateAll(IReadOnlyList<double[]> points)
    {
        var objectives = new double[points.Count][];
        for (var i = 0; i < points.Count; i++) objectives[i] = new double[Objectives];
        var violations = new double[points.Count];
        Evaluate(points, objectives, violations);
        return (objectives, violations);
    }
}

/// <summary>The settings of Deb et al. (2002) by default: crossover probability 0.9, distribution indices 20 and 20,
/// mutation probability 1/n.</summary>
public sealed record Nsga2Options
{
    public int PopulationSize { get; init; } = 100;

    public int Generations { get; init; } = 200;

    public double CrossoverProbability { get; init; } = 0.9;

    /// <summary>η_c of simulated binary crossover.</summary>
    public double CrossoverDistribution { get; init; } = 20;

    /// <summary>η_m of polynomial mutation.</summary>
    public double MutationDistribution { get; init; } = 20;

    /// <summary>Per-variable mutation probability; null: 1/n.</summary>
    public double? MutationProbability { get; init; }

    public int Seed { get; init; } = 1;

    /// <summary>Stops after the generation that passes this much time (the result is then the population so far).</summary>
    public TimeSpan? TimeLimit { get; init; }

    internal void Check()
    {
        if (PopulationSize < 4 || PopulationSize % 2 != 0)
            throw new ArgumentException("The population needs an even size of at least 4.", nameof(PopulationSize));
        if (Generations < 0) throw new ArgumentException("The number of generations cannot be negative.", nameof(Generations));
    }
}

/// <summary>The final population: points, objectives, violations, non-domination rank (1 = Pareto front of the
/// population) and crowding distance.</summary>
public sealed record Nsga2Result(
    IReadOnlyList<double[]> Points,
    IReadOnlyList<double[]> Objectives,
    IReadOnlyList<double> Violations,
    IReadOnlyList<int> Ranks,
    IReadOnlyList<double> Crowding,
    int Generations,
    int Evaluations)
{
    /// <summary>Positions of the feasible points of rank 1.</summary>
    public IReadOnlyList<int> Front => [.. Enumerable.Range(0, Points.Count).Where(i => Ranks[i] == 1 && Violations[i] == 0)];
}

public static class Nsga2
{
    /// <summary>
    /// Minimises every objective. The first population is <paramref name="initial"/> (repaired, up to the population
    /// size) filled up with uniform random points. Each generation makes as many children by binary tournaments on
    /// the crowded comparison, simulated binary crossover and polynomial mutation, then keeps the best half of parents
    /// and children by non-domination rank and crowding distance. Constraints follow constrained domination (Deb et
    /// al. 2002, §VI): feasible beats infeasible, and of two infeasible points the smaller violation wins.
    /// </summary>
    public static Nsga2Result Minimize(BoxProblem problem, Nsga2Options? options = null, IReadOnlyList<double[]>? initial = null,
        CancellationToken cancellation = default)
    {
        ArgumentNullException.ThrowIfNull(problem);
        problem.Check();
        options ??= new Nsga2Options();
        options.Check();
        var watch = Stopwatch.StartNew();
        var random = new Random(options.Seed);
        var n = options.PopulationSize;
        var dimension = problem.Dimension;
        var mutation = options.MutationProbability ?? 1.0 / dimension;

        var points = problem.StartingPoints(initial, n, random);
        var (objectives, violations) = problem.EvaluateAll(points);
        var evaluations = n;
        var ranks = Sorting.Rank(objectives, violations);
        var crowding = Sorting.Crowding(objectives, ranks);

        var generation = 0;
        for (; generation < options.Generations; generation++)
        {
            cancellation.ThrowIfCancellationRequested();
            if (options.TimeLimit is { } limit && watch.Elapsed > limit) break;
            var children = new List<double[]>(n);
            while (children.Count < n)
            {
                var a = points[Tournament(random, ranks, crowding, violations)];
                var b = points[Tournament(random, ranks, crowding, violations)];
                var (c1, c2) = Crossover(problem, a, b, options, random);
                Mutate(problem, c1, mutation, options.MutationDistribution, random);
                Mutate(problem, c2, mutation, options.MutationDistribution, random);
                problem.Repair?.Invoke(c1);
                problem.Repair?.Invoke(c2);
                children.Add(c1);
                children.Add(c2);
            }
            var (childObjectives, childViolations) = problem.EvaluateAll(children);
            evaluations += children.Count;

            var allPoints = points.Concat(children).ToList();
            var allObjectives = objectives.Concat(childObjectives).ToArray();
            var allViolations = violations.Concat(childViolations).ToArray();
            var allRanks = Sorting.Rank(allObjectives, allViolations);
            var allCrowding = Sorting.Crowding(allObjectives, allRanks);
            var keep = Enumerable.Range(0, allPoints.Count)
                .OrderBy(i => allRanks[i]).ThenByDescending(i => allCrowding[i]).ThenBy(i => i)
                .Take(n).ToArray();
            points = [.. keep.Select(i => allPoints[i])];
            objectives = [.. keep.Select(i => allObjectives[i])];
            violations = [.. keep.Select(i => allViolations[i])];
            // The survivors are whole fronts plus part of the last, so their ranks are the ones just sorted; the
            // crowding distances are measured again among the survivors.
            ranks = [.. keep.Select(i => allRanks[i])];
            crowding = Sorting.Crowding(objectives, ranks);
        }
        return new Nsga2Result(points, objectives, violations, ranks, crowding, generation, evaluations);
    }

    /// <summary>Binary tournament on the crowded comparison (rank, then crowding distance).</summary>
    private static int Tournament(Random random, int[] ranks, double[] crowding, double[] violations)
    {
        var a = random.Next(ranks.Length);
        var b = random.Next(ranks.Length);
        if (ranks[a] != ranks[b]) return ranks[a] < ranks[b] ? a : b;
        if (violations[a] != violations[b]) return violations[a] < violations[b] ? a : b;
        if (crowding[a] != crowding[b]) return crowding[a] > crowding[b] ? a : b;
        return random.Next(2) == 0 ? a : b;
    }

    /// <summary>Simulated binary crossover with bounds, variable by variable with probability ½ (Deb's reference
    /// implementation of NSGA-II).</summary>
    private static (double[], double[]) Crossover(BoxProblem problem, double[] a, double[] b, Nsga2Options options, Random random)
    {
        var c1 = (double[])a.Clone();
        var c2 = (double[])b.Clone();
        if (random.NextDouble() > options.CrossoverProbability) return (c1, c2);
        var eta = options.CrossoverDistribution;
        for (var j = 0; j < a.Length; j++)
        {
            if (random.NextDouble() > 0.5 || Math.Abs(a[j] - b[j]) <= 1e-14) continue;
            var (y1, y2) = a[j] < b[j] ? (a[j], b[j]) : (b[j], a[j]);
            var (low, high) = (problem.Lower[j], problem.Upper[j]);
            var u = random.NextDouble();
            var beta = 1 + 2 * (y1 - low) / (y2 - y1);
            var first = 0.5 * (y1 + y2 - Spread(beta, eta, u) * (y2 - y1));
            beta = 1 + 2 * (high - y2) / (y2 - y1);
            var second = 0.5 * (y1 + y2 + Spread(beta, eta, u) * (y2 - y1));
            first = Math.Clamp(first, low, high);
            second = Math.Clamp(second, low, high);
            if (random.NextDouble() <= 0.5) (first, second) = (second, first);
            c1[j] = first;
            c2[j] = second;
        }
        return (c1, c2);
    }

    private static double Spread(double beta, double eta, double u)
    {
        var alpha = 2 - Math.Pow(beta, -(eta + 1));
        return u <= 1 / alpha ? Math.Pow(u * alpha, 1 / (eta + 1)) : Math.Pow(1 / (2 - u * alpha), 1 / (eta + 1));
    }

    /// <summary>Polynomial mutation with bounds (Deb's reference implementation).</summary>
    internal static void Mutate(BoxProblem problem, double[] x, double probability, double eta, Random random)
    {
        for (var j = 0; j < x.Length; j++)
        {
            if (random.NextDouble() > probability) continue;
            var (low, high) = (problem.Lower[j], problem.Upper[j]);
            var width = high - low;
            var delta1 = (x[j] - low) / width;
            var delta2 = (high - x[j]) / width;
            var u = random.NextDouble();
            var power = 1 / (eta + 1);
            double deltaQ;
            if (u < 0.5)
            {
                var value = 2 * u + (1 - 2 * u) * Math.Pow(1 - delta1, eta + 1);
                deltaQ = Math.Pow(value, power) - 1;
            }
            else
            {
                var value = 2 * (1 - u) + 2 * (u - 0.5) * Math.Pow(1 - delta2, eta + 1);
                deltaQ = 1 - Math.Pow(value, power);
            }
            x[j] = Math.Clamp(x[j] + deltaQ * width, low, high);
        }
    }
}

/// <summary>Fast non-dominated sorting and crowding distance (Deb et al. 2002, §III).</summary>
public static class Sorting
{
    /// <summary>True when a constrained-dominates b.</summary>
    public static bool Dominates(double[] a, double violationA, double[] b, double violationB)
    {
        if (violationA != violationB && (violationA > 0 || violationB > 0)) return violationA < violationB;
        var better = false;
        for (var m = 0; m < a.Length; m++)
        {
            if (a[m] > b[m]) return false;
            if (a[m] < b[m]) better = true;
        }
        return better;
    }

    /// <summary>Non-domination rank of every point, 1 for the first front.</summary>
    public static int[] Rank(IReadOnlyList<double[]> objectives, IReadOnlyList<double> violations)
    {
        var count = objectives.Count;
        var dominatedBy = new int[count];
        var dominates = new List<int>[count];
        var ranks = new int[count];
        var front = new List<int>();
        for (var p = 0; p < count; p++) dominates[p] = [];
        // Each pair once.
        for (var p = 0; p < count; p++)
            for (var q = p + 1; q < count; q++)
            {
                if (Dominates(objectives[p], violations[p], objectives[q], violations[q]))
                {
                    dominates[p].Add(q);
                    dominatedBy[q]++;
                }
                else if (Dominates(objectives[q], violations[q], objectives[p], violations[p]))
                {
                    dominates[q].Add(p);
                    dominatedBy[p]++;
                }
            }
        for (var p = 0; p < count; p++)
            if (dominatedBy[p] == 0)
            {
                ranks[p] = 1;
                front.Add(p);
            }
        var rank = 1;
        while (front.Count > 0)
        {
            var next = new List<int>();
            foreach (var p in front)
                foreach (var q in dominates[p])
                    if (--dominatedBy[q] == 0)
                    {
                        ranks[q] = rank + 1;
                        next.Add(q);
                    }
            rank++;
            front = next;
        }
        return ranks;
    }

    /// <summary>Crowding distance within each front: the ends of each objective are infinite, the rest sum the
    /// normalised gaps of their neighbours.</summary>
    public static double[] Crowding(IReadOnlyList<double[]> objectives, int[] ranks)
    {
        var count = objectives.Count;
        var distance = new double[count];
        if (count == 0) return distance;
        var objectiveCount = objectives[0].Length;
        var fronts = new Dictionary<int, List<int>>();
        for (var i = 0; i < count; i++)
        {
            if (!fronts.TryGetValue(ranks[i], out var members)) fronts[ranks[i]] = members = [];
            members.Add(i);
        }
        foreach (var members in fronts.Values)
        {
            var sorted = members.ToArray();
            for (var m = 0; m < objectiveCount; m++)
            {
                // By value, ties by position, so the order never depends on the sort's stability.
                Array.Sort(sorted, (a, b) =>
                {
                    var byValue = objectives[a][m].CompareTo(objectives[b][m]);
                    return byValue != 0 ? byValue : a.CompareTo(b);
                });
                var low = objectives[sorted[0]][m];
                var high = objectives[sorted[^1]][m];
                distance[sorted[0]] = distance[sorted[^1]] = double.PositiveInfinity;
                if (!(high > low)) continue;
                for (var s = 1; s < sorted.Length - 1; s++)
                    distance[sorted[s]] += (objectives[sorted[s + 1]][m] - objectives[sorted[s - 1]][m]) / (high - low);
            }
        }
        return distance;
    }
}
