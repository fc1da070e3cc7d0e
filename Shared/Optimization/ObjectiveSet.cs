using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Optimization;

/// <summary>Every response's predicted mean at a batch of points, and what the searches read from them.</summary>
internal sealed record Evaluation(
    double[][] Means,        // [response][point]
    double[] Desirability,   // overall D per point
    double[] Fitness,        // D, or minus the shortfall from the region where every d > 0
    double[] FactorViolation,
    double[] LimitViolation,
    double[][] Goals)        // [point][goal response], normalised, to minimise
{
    public int Count => Desirability.Length;
}

/// <summary>
/// The responses of a search together: their desirability functions over the span of values each takes (predicted
/// over spread points and the runs, plus the observed values), weights, and one vectorised evaluation per batch.
/// </summary>
internal sealed class ObjectiveSet
{
    public ObjectiveSet(SearchSpace search, IReadOnlyList<ResponseObjective> objectives, IReadOnlyList<double[]> runs, IReadOnlyList<double[]> spread)
    {
        Search = search;
        Objectives = objectives;
        GoalResponses = [.. Enumerable.Range(0, objectives.Count).Where(r => objectives[r].HasGoal)];
        Weights = [.. GoalResponses.Select(r => objectives[r].Response.Weight)];
        var probe = spread.Concat(runs).ToList();
        var means = Means(probe);
        Functions = new DesirabilityFunction[objectives.Count];
        Scales = new double[objectives.Count];
        for (var r = 0; r < objectives.Count; r++)
        {
            var values = means[r].Concat(objectives[r].Observed ?? []).Where(double.IsFinite).ToArray();
            var low = values.Length == 0 ? 0 : values.Min();
            var high = values.Length == 0 ? 1 : values.Max();
            Functions[r] = objectives[r].Desirability(low, high);
            var span = high - low;
            Scales[r] = span > 0 ? span : Math.Max(Math.Abs(high), 1);
        }
    }

    public SearchSpace Search { get; }

    /// <summary>The checks the searches share: every surrogate and the runs have one column per factor.</summary>
    public static void CheckInputs(FactorSpace space, IReadOnlyList<ResponseObjective> objectives, Matrix<double> codedRuns, bool requireObjectives)
    {
        ArgumentNullException.ThrowIfNull(space);
        ArgumentNullException.ThrowIfNull(objectives);
        ArgumentNullException.ThrowIfNull(codedRuns);
        if (requireObjectives && objectives.Count == 0) throw new ArgumentException("At least one response is needed.", nameof(objectives));
        foreach (var o in objectives)
            if (o.Surrogate.Space.Count != space.Count)
                throw new ArgumentException($"The surrogate of {o.Name} has {o.Surrogate.Space.Count} factors; the study has {space.Count}.", nameof(objectives));
        if (codedRuns.ColumnCount != space.Count)
            throw new ArgumentException($"The runs have {codedRuns.ColumnCount} columns for {space.Count} factors.", nameof(codedRuns));
    }

    public IReadOnlyList<ResponseObjective> Objectives { get; }

    /// <summary>Positions of the responses with a goal (the ones in the overall desirability).</summary>
    public int[] GoalResponses { get; }

    public double[] Weights { get; }

    public DesirabilityFunction[] Functions { get; }

    /// <summary>The span of each response (its scale for shortfalls and normalised goals).</summary>
    public double[] Scales { get; }

    public double[][] Means(IReadOnlyList<double[]> points)
    {
        if (points.Count == 0) return [.. Objectives.Select(_ => Array.Empty<double>())];
        var matrix = SearchSpace.ToMatrix(points, Search.Dimension);
        var means = new double[Objectives.Count][];
        // The responses are independent, so a batch worth the hand-off predicts them side by side.
        if (Objectives.Count > 1 && points.Count >= 32) Parallel.For(0, Objectives.Count, r => means[r] = Objectives[r].Surrogate.PredictMean(matrix));
        else for (var r = 0; r < Objectives.Count; r++) means[r] = Objectives[r].Surrogate.PredictMean(matrix);
        return means;
    }

    public Evaluation Evaluate(IReadOnlyList<double[]> points)
    {
        var means = Means(points);
        var count = points.Count;
        var desirability = new double[count];
        var fitness = new double[count];
        var factorViolation = new double[count];
        var limitViolation = new double[count];
        var goals = new double[count][];
        Span<double> d = stackalloc double[GoalResponses.Length];
        for (var i = 0; i < count; i++)
        {
            var shortfall = 0.0;
            for (var r = 0; r < Objectives.Count; r++)
            {
                var y = means[r][i];
                shortfall += Functions[r].Shortfall(y, Scales[r]);
                if (Objectives[r].HasHardLimit) limitViolation[i] += LimitMiss(Objectives[r].Response, y) / Scales[r];
            }
            goals[i] = new double[GoalResponses.Length];
            for (var g = 0; g < GoalResponses.Length; g++)
            {
                var r = GoalResponses[g];
                d[g] = Functions[r].Evaluate(means[r][i]);
                goals[i][g] = GoalValue(r, means[r][i]);
            }
            var overall = Desirability.Overall(d, Weights);
            // Limits on responses without a goal still cut the desirability to 0.
            if (limitViolation[i] > 0) overall = 0;
            desirability[i] = overall;
            fitness[i] = overall > 0 ? overall : -shortfall;
            factorViolation[i] = Search.Violation(points[i]);
        }
        return new Evaluation(means, desirability, fitness, factorViolation, limitViolation, goals);
    }

    /// <summary>Each goal as a value to minimise, in units of the response's span: minimize y, maximize −y, the
    /// distance to a target, the distance outside a range.</summary>
    private double GoalValue(int r, double y)
    {
        var f = Functions[r];
        var value = Objectives[r].Goal switch
        {
            ResponseGoal.Minimize => y,
            ResponseGoal.Maximize => -y,
            ResponseGoal.Target => Math.Abs(y - f.Target),
            ResponseGoal.Range => y < f.Low ? f.Low - y : y > f.High ? y - f.High : 0,
            _ => 0,
        };
        return double.IsFinite(value) ? value / Scales[r] : double.MaxValue;
    }

    private static double LimitMiss(Response response, double y)
    {
        if (double.IsNaN(y)) return double.MaxValue;
        if (response.Lower is { } low && y < low) return low - y;
        if (response.Upper is { } high && y > high) return y - high;
        return 0;
    }
}
