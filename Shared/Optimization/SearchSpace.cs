using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Optimization;

/// <summary>
/// The coded box −1…+1 of a factor space as the searches see it: integer factors snap to whole values and categorical
/// factors to their levels after every move, and constraints (natural units) give a violation to walk back from.
/// </summary>
internal sealed class SearchSpace
{
    public SearchSpace(FactorSpace space, DesignConstraints constraints)
    {
        Space = space;
        Constraints = constraints;
        Lower = [.. Enumerable.Repeat(-1.0, space.Count)];
        Upper = [.. Enumerable.Repeat(1.0, space.Count)];
        Continuous = [.. Enumerable.Range(0, space.Count).Where(j => space[j].Kind == FactorKind.Continuous)];
    }

    public FactorSpace Space { get; }

    public DesignConstraints Constraints { get; }

    public int Dimension => Space.Count;

    public double[] Lower { get; }

    public double[] Upper { get; }

    /// <summary>Positions of the continuous factors (the only ones a gradient search moves).</summary>
    public int[] Continuous { get; }

    /// <summary>Clamps to the box and snaps integer and categorical factors to their values, in place.</summary>
    public void Repair(double[] coded)
    {
        for (var j = 0; j < coded.Length; j++)
        {
            var value = Math.Clamp(double.IsNaN(coded[j]) ? 0 : coded[j], -1, 1);
            var factor = Space[j];
            coded[j] = factor.Kind == FactorKind.Continuous ? value : factor.ToCoded(factor.FromCoded(value));
        }
    }

    public double Violation(double[] coded) => Constraints.IsEmpty ? 0 : Constraints.Violation(Space.FromCoded(coded));

    public bool IsFeasible(double[] coded) => Violation(coded) == 0;

    /// <summary>Spread feasible candidates (scrambled Sobol' points, integer and categorical values equally likely).</summary>
    public List<double[]> Spread(int wanted, int seed) =>
        SpaceFilling.FeasibleCandidates(Space, Constraints, wanted, maxDraws: Math.Max(20 * wanted, 4096), seed).Feasible;

    public static Matrix<double> ToMatrix(IReadOnlyList<double[]> rows, int columns)
    {
        var storage = new double[rows.Count * columns];
        for (var j = 0; j < columns; j++)
            for (var i = 0; i < rows.Count; i++) storage[j * rows.Count + i] = rows[i][j];
        return Matrix<double>.Build.Dense(rows.Count, columns, storage);
    }

    public static List<double[]> Rows(Matrix<double> matrix)
    {
        var rows = new List<double[]>(matrix.RowCount);
        for (var i = 0; i < matrix.RowCount; i++) rows.Add(matrix.Row(i).ToArray());
        return rows;
    }

    public static double Distance(double[] a, double[] b) => Math.Sqrt(DesignMetrics.SquaredDistance(a, b));

    /// <summary>The distance from <paramref name="point"/> to the nearest of <paramref name="others"/> (∞ when none).</summary>
    public static double Nearest(double[] point, IReadOnlyList<double[]> others)
    {
        var best = double.PositiveInfinity;
        foreach (var other in others) best = Math.Min(best, DesignMetrics.SquaredDistance(point, other));
        return Math.Sqrt(best);
    }
}
