// Differential evolution, DE/rand/1/bin (Storn & Price 1997, "Differential evolution – a simple and efficient
// heuristic for global optimization over continuous spaces", J. Global Optim. 11), with Deb's (2000) feasibility rules.
using System.Diagnostics;

namespace Runfold.Shared.Optimization;

/// <summary>DE/rand/1/bin settings: F = 0.7 and CR = 0.9 are within Storn &amp; Price's recommended ranges.</summary>
public sealed record DifferentialEvolutionOptions
{
    public int PopulationSize { get; init; } = 40;

    public int Generations { get; init; } = 100;

    /// <summary>F, the weight of the difference vector.</summary>
    public double DifferentialWeight { get; init; } = 0.7;

    /// <summary>CR, the chance that a variable comes from the mutant.</summary>
    public double CrossoverRate { get; init; } = 0.9;

    public int Seed { get; init; } = 1;

    public TimeSpan? TimeLimit { get; init; }

    internal void Check()
    {
        if (PopulationSize < 4) throw new ArgumentException("Differential evolution needs a population of at least 4.", nameof(PopulationSize));
        if (Generations < 0) throw new ArgumentException("The number of generations cannot be negative.", nameof(Generations));
    }
}

/// <summary>The final population with each point's objective and violation; <see cref="Best"/> is its best member.</summary>
public sealed record DifferentialEvolutionResult(
    IReadOnlyList<double[]> Points,
    IReadOnlyList<double> Values,
    IReadOnlyList<double> Violations,
    int Best,
    int Generations,
    int Evaluations);

public static class DifferentialEvolution
{
    /// <summary>
    /// Minimises the first objective of <paramref name="problem"/>. Every generation builds one trial per member
    /// (mutant a + F(b − c) of three other random members, binomial crossover with at least one mutant variable, a
    /// variable that leaves the box put halfway between its parent and the bound, repair) and evaluates the trials as
    /// one batch; a trial replaces its parent when it is feasible and no worse, or less infeasible.
    /// </summary>
    public static DifferentialEvolutionResult Minimize(BoxProblem problem, DifferentialEvolutionOptions? options = null,
        IReadOnlyList<double[]>? initial = null, CancellationToken cancellation = default)
    {
        ArgumentNullException.ThrowIfNull(problem);
        problem.Check();
        options ??= new DifferentialEvolutionOptions();
        options.Check();
        var watch = Stopwatch.StartNew();
        var random = new Random(options.Seed);
        var n = options.PopulationSize;
        var dimension = problem.Dimension;
        var population = problem.StartingPoints(initial, n, random);
        var (objectives, violations) = problem.EvaluateAll(population);
        var values = objectives.Select(o => o[0]).ToArray();
        var evaluations = n;

        var generation = 0;
        for (; generation < options.Generations; generation++)
        {
            cancellation.ThrowIfCancellationRequested();
            if (options.TimeLimit is { } limit && watch.Elapsed > limit) break;
            var trials = new List<double[]>(n);
            for (var i = 0; i < n; i++)
            {
                int a, b, c;
                do a = random.Next(n); while (a == i);
                do b = random.Next(n); while (b == i || b == a);
                do c = random.Next(n); while (c == i || c == a || c == b);
                var forced = random.Next(dimension);
                var trial = (double[])population[i].Clone();
                for (var j = 0; j < dimension; j++)
                {
                    if (j != forced && random.NextDouble() >= options.CrossoverRate) continue;
                    var value = population[a][j] + options.DifferentialWeight * (population[b][j] - population[c][j]);
                    if (value < problem.Lower[j]) value = (population[i][j] + problem.Lower[j]) / 2;
                    else if (value > problem.Upper[j]) value = (population[i][j] + problem.Upper[j]) / 2;
                    trial[j] = value;
                }
                problem.Repair?.Invoke(trial);
                trials.Add(trial);
            }
            var (trialObjectives, trialViolations) = problem.EvaluateAll(trials);
            evaluations += n;
            for (var i = 0; i < n; i++)
            {
                if (!Better(trialObjectives[i][0], trialViolations[i], values[i], violations[i], orEqual: true)) continue;
                population[i] = trials[i];
                values[i] = trialObjectives[i][0];
                violations[i] = trialViolations[i];
            }
        }
        var best = 0;
        for (var i = 1; i < n; i++)
            if (Better(values[i], violations[i], values[best], violations[best], orEqual: false)) best = i;
        return new DifferentialEvolutionResult(population, values, violations, best, generation, evaluations);
    }

    /// <summary>Deb's (2000) rules: less violation wins; between feasible points the lower value wins.</summary>
    internal static bool Better(double value, double violation, double otherValue, double otherViolation, bool orEqual)
    {
        if (violation != otherViolation) return violation < otherViolation;
        if (double.IsNaN(value)) return false;
        if (double.IsNaN(otherValue)) return true;
        return orEqual ? value <= otherValue : value < otherValue;
    }
}
