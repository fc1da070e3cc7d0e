// Local refinement by the projected L-BFGS search of Modeling (Nocedal & Wright 2006, Alg. 7.4 and §16.7) with
// forward-difference gradients, each gradient evaluated as one batch of points.
using Runfold.Shared.Modeling.LinearAlgebra;

namespace Runfold.Shared.Optimization;

internal static class LocalPolish
{
    private const double Step = 1e-6;

    /// <summary>
    /// Maximises <paramref name="score"/> (a batch function; −∞ or NaN marks a point that must not be taken, such as
    /// one that breaks a constraint) over the continuous factors of <paramref name="start"/>, holding integer and
    /// categorical factors where they are. Returns the start when nothing better is found.
    /// </summary>
    public static (double[] Point, double Score) Maximize(SearchSpace search, double[] start, Func<IReadOnlyList<double[]>, double[]> score,
        int maxIterations, CancellationToken cancellation)
    {
        var free = search.Continuous;
        var startScore = score([start])[0];
        if (free.Length == 0 || maxIterations <= 0) return (start, startScore);
        double[] Point(double[] theta)
        {
            var point = (double[])start.Clone();
            for (var f = 0; f < free.Length; f++) point[free[f]] = theta[f];
            return point;
        }
        double ValueAndGradient(double[] theta, double[] gradient)
        {
            var points = new List<double[]> { Point(theta) };
            var steps = new double[free.Length];
            for (var f = 0; f < free.Length; f++)
            {
                steps[f] = theta[f] + Step <= 1 ? Step : -Step;
                var moved = (double[])theta.Clone();
                moved[f] += steps[f];
                points.Add(Point(moved));
            }
            var values = score(points);
            if (!double.IsFinite(values[0])) return double.PositiveInfinity;
            for (var f = 0; f < free.Length; f++)
                gradient[f] = double.IsFinite(values[f + 1]) ? -(values[f + 1] - values[0]) / steps[f] : 0;
            return -values[0];
        }
        var lower = Enumerable.Repeat(-1.0, free.Length).ToArray();
        var upper = Enumerable.Repeat(1.0, free.Length).ToArray();
        var initial = free.Select(j => start[j]).ToArray();
        var result = BoundedQuasiNewton.Minimize(ValueAndGradient, initial, lower, upper,
            new QuasiNewtonSettings(MaxIterations: maxIterations, ProjectedGradientTolerance: 1e-9, RelativeReductionTolerance: 1e-12), cancellation);
        var end = Point(result.Point);
        var endScore = -result.Value;
        return double.IsFinite(endScore) && endScore > startScore ? (end, endScore) : (start, startScore);
    }
}
