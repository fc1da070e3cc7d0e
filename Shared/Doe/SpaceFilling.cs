// Greedy maximin (farthest-point) selection from a candidate set (Gonzalez 1985; Johnson, Moore & Ylvisaker
// 1990), used for constrained space-filling designs and to augment a design with runs far from the old ones.
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Doe;

internal static class SpaceFilling
{
    /// <summary>Coded candidates spread over the feasible region: scrambled Sobol' points (mapped so integer and
    /// categorical factors take their values evenly), kept when they satisfy every constraint. Draws up to
    /// <paramref name="maxDraws"/> points to collect <paramref name="wanted"/>.</summary>
    public static (List<double[]> Feasible, int Drawn) FeasibleCandidates(
        FactorSpace space, DesignConstraints constraints, int wanted, int maxDraws, int seed)
    {
        var feasible = new List<double[]>(wanted);
        var drawn = 0;
        var batch = Math.Min(maxDraws, Math.Max(1024, wanted));
        var round = 0;
        while (feasible.Count < wanted && drawn < maxDraws)
        {
            var unit = SobolSequence.Generate(batch, space.Count, scramble: true, seed: unchecked(seed * 7919 + round++));
            for (var i = 0; i < batch && feasible.Count < wanted; i++)
            {
                var coded = new double[space.Count];
                for (var j = 0; j < space.Count; j++) coded[j] = UnitCube.ToCoded(space[j], unit[i, j]);
                if (constraints.IsFeasible(space.FromCoded(coded))) feasible.Add(coded);
            }
            drawn += batch;
        }
        return (feasible, drawn);
    }

    /// <summary>Picks <paramref name="count"/> candidates one at a time, each the one farthest from every run
    /// already there and every run picked so far; then a bounded exchange pass moves the run of the closest pair
    /// to the candidate that lies farthest from the rest, while that increases the smallest distance.</summary>
    public static List<double[]> GreedyMaximin(IReadOnlyList<double[]> candidates, IReadOnlyList<double[]> existing, int count)
    {
        var nearest = new double[candidates.Count];
        Array.Fill(nearest, double.PositiveInfinity);
        foreach (var run in existing) Update(nearest, candidates, run);
        var chosen = new List<double[]>(count);
        var taken = new bool[candidates.Count];
        for (var pick = 0; pick < count; pick++)
        {
            var best = -1;
            for (var c = 0; c < candidates.Count; c++)
                if (!taken[c] && (best < 0 || nearest[c] > nearest[best])) best = c;
            if (best < 0) break;
            taken[best] = true;
            chosen.Add(candidates[best]);
            Update(nearest, candidates, candidates[best]);
        }
        Exchange(chosen, candidates, existing, maxSteps: Math.Min(2 * count, 200));
        return chosen;
    }

    private static void Update(double[] nearest, IReadOnlyList<double[]> candidates, double[] run)
    {
        for (var c = 0; c < candidates.Count; c++)
            nearest[c] = Math.Min(nearest[c], DesignMetrics.SquaredDistance(candidates[c], run));
    }

    private static void Exchange(List<double[]> chosen, IReadOnlyList<double[]> candidates, IReadOnlyList<double[]> existing, int maxSteps)
    {
        if (chosen.Count == 0) return;
        for (var step = 0; step < maxSteps; step++)
        {
            // The new run in the closest pair (new–new or new–old).
            var (worst, worstDistance) = (-1, double.PositiveInfinity);
            for (var i = 0; i < chosen.Count; i++)
            {
                var d = NearestOther(chosen[i], i, chosen, existing);
                if (d < worstDistance) (worst, worstDistance) = (i, d);
            }
            if (worst < 0 || double.IsPositiveInfinity(worstDistance)) return;
            var (bestCandidate, bestDistance) = (-1, worstDistance);
            for (var c = 0; c < candidates.Count; c++)
            {
                var d = NearestOther(candidates[c], worst, chosen, existing);
                if (d > bestDistance * (1 + 1e-12)) (bestCandidate, bestDistance) = (c, d);
            }
            if (bestCandidate < 0) return;
            chosen[worst] = candidates[bestCandidate];
        }
    }

    private static double NearestOther(double[] point, int skip, List<double[]> chosen, IReadOnlyList<double[]> existing)
    {
        var best = double.PositiveInfinity;
        for (var i = 0; i < chosen.Count; i++)
            if (i != skip) best = Math.Min(best, DesignMetrics.SquaredDistance(point, chosen[i]));
        foreach (var run in existing) best = Math.Min(best, DesignMetrics.SquaredDistance(point, run));
        return best;
    }

    public static Matrix<double> ToMatrix(IReadOnlyList<double[]> rows, int columns)
    {
        var m = Matrix<double>.Build.Dense(rows.Count, columns);
        for (var i = 0; i < rows.Count; i++)
            for (var j = 0; j < columns; j++) m[i, j] = rows[i][j];
        return m;
    }
}
