// Projected limited-memory BFGS for box constraints (Nocedal & Wright, Numerical Optimization, 2nd ed. 2006,
// Algorithm 7.4 two-loop recursion and §16.7 gradient projection; in the spirit of L-BFGS-B, Byrd et al. 1995).
namespace Runfold.Shared.Modeling.LinearAlgebra;

/// <summary>Settings of <see cref="BoundedQuasiNewton"/>.</summary>
internal sealed record QuasiNewtonSettings(
    int MaxIterations = 200,
    int Memory = 10,
    double ProjectedGradientTolerance = 1e-5,
    double RelativeReductionTolerance = 1e-9);

/// <summary>The end point of a minimisation.</summary>
internal readonly record struct QuasiNewtonResult(double[] Point, double Value, int Iterations, int Evaluations);

/// <summary>
/// Minimises a smooth function with its gradient inside a box. Variables sitting on a bound with the gradient
/// pointing out are held; the rest move along the L-BFGS direction with a projected backtracking (Armijo) line
/// search. An evaluation that returns a non-finite value counts as a failed trial step and the step is halved.
/// </summary>
internal static class BoundedQuasiNewton
{
    /// <param name="valueAndGradient">Returns f(x) and writes ∇f(x) into the second argument.</param>
    public static QuasiNewtonResult Minimize(
        Func<double[], double[], double> valueAndGradient,
        double[] start, double[] lower, double[] upper, QuasiNewtonSettings settings, CancellationToken cancellation)
    {
        var dim = start.Length;
        var x = new double[dim];
        for (var i = 0; i < dim; i++) x[i] = Math.Clamp(start[i], lower[i], upper[i]);
        var g = new double[dim];
        var f = valueAndGradient(x, g);
        var evaluations = 1;
        if (!double.IsFinite(f)) return new(x, double.PositiveInfinity, 0, evaluations);

        var memoryS = new List<double[]>();
        var memoryY = new List<double[]>();
        var direction = new double[dim];
        var trial = new double[dim];
        var trialGradient = new double[dim];
        var free = new bool[dim];
        var iteration = 0;
        for (; iteration < settings.MaxIterations; iteration++)
        {
            cancellation.ThrowIfCancellationRequested();
            var projectedNorm = 0.0;
            for (var i = 0; i < dim; i++)
            {
                var held = (x[i] <= lower[i] && g[i] > 0) || (x[i] >= upper[i] && g[i] < 0);
                free[i] = !held;
                if (!held) projectedNorm = Math.Max(projectedNorm, Math.Abs(g[i]));
            }
            if (projectedNorm < settings.ProjectedGradientTolerance) break;

            Direction(g, free, memoryS, memoryY, direction);
            var slope = 0.0;
            for (var i = 0; i < dim; i++) slope += g[i] * direction[i];
            if (!(slope < 0))
            {
                memoryS.Clear();
                memoryY.Clear();
                for (var i = 0; i < dim; i++) direction[i] = free[i] ? -g[i] : 0;
            }

            var step = 1.0;
            if (memoryS.Count == 0)
            {
                var largest = 0.0;
                for (var i = 0; i < dim; i++) largest = Math.Max(largest, Math.Abs(direction[i]));
                if (largest > 1) step = 1 / largest; // first step moves each variable by at most one unit
            }

            var accepted = false;
            double trialValue = double.NaN;
            for (var attempt = 0; attempt < 40; attempt++)
            {
                var moved = false;
                var decrease = 0.0;
                for (var i = 0; i < dim; i++)
                {
                    trial[i] = Math.Clamp(x[i] + step * direction[i], lower[i], upper[i]);
                    if (trial[i] != x[i]) moved = true;
                    decrease += g[i] * (trial[i] - x[i]);
                }
                if (!moved) break;
                trialValue = valueAndGradient(trial, trialGradient);
                evaluations++;
                if (double.IsFinite(trialValue) && trialValue <= f + 1e-4 * decrease)
                {
                    accepted = true;
                    break;
                }
                step *= 0.5;
            }
            if (!accepted)
            {
                if (memoryS.Count == 0) break;
                memoryS.Clear(); // retry once along the projected steepest descent
                memoryY.Clear();
                continue;
            }

            var s = new double[dim];
            var y = new double[dim];
            var sy = 0.0;
            var yy = 0.0;
            for (var i = 0; i < dim; i++)
            {
                s[i] = trial[i] - x[i];
                y[i] = trialGradient[i] - g[i];
                sy += s[i] * y[i];
                yy += y[i] * y[i];
            }
            if (sy > 1e-12 * Math.Sqrt(yy) * Norm(s))
            {
                if (memoryS.Count == settings.Memory)
                {
                    memoryS.RemoveAt(0);
                    memoryY.RemoveAt(0);
                }
                memoryS.Add(s);
                memoryY.Add(y);
            }
            var reduction = (f - trialValue) / Math.Max(Math.Max(Math.Abs(f), Math.Abs(trialValue)), 1);
            Array.Copy(trial, x, dim);
            Array.Copy(trialGradient, g, dim);
            f = trialValue;
            if (reduction <= settings.RelativeReductionTolerance) { iteration++; break; }
        }
        return new(x, f, iteration, evaluations);
    }

    private static void Direction(double[] g, bool[] free, List<double[]> memoryS, List<double[]> memoryY, double[] d)
    {
        var dim = g.Length;
        for (var i = 0; i < dim; i++) d[i] = free[i] ? g[i] : 0;
        var count = memoryS.Count;
        var a = new double[count];
        for (var m = count - 1; m >= 0; m--)
        {
            var rho = 1 / Dot(memoryY[m], memoryS[m], free);
            a[m] = rho * Dot(memoryS[m], d, free);
            Axpy(-a[m], memoryY[m], d, free);
        }
        if (count > 0)
        {
            var gamma = Dot(memoryS[count - 1], memoryY[count - 1], free) / Dot(memoryY[count - 1], memoryY[count - 1], free);
            if (double.IsFinite(gamma) && gamma > 0)
                for (var i = 0; i < dim; i++) d[i] *= gamma;
        }
        for (var m = 0; m < count; m++)
        {
            var rho = 1 / Dot(memoryY[m], memoryS[m], free);
            var b = rho * Dot(memoryY[m], d, free);
            Axpy(a[m] - b, memoryS[m], d, free);
        }
        for (var i = 0; i < dim; i++) d[i] = free[i] && double.IsFinite(d[i]) ? -d[i] : 0;
    }

    private static double Dot(double[] u, double[] v, bool[] free)
    {
        var sum = 0.0;
        for (var i = 0; i < u.Length; i++) if (free[i]) sum += u[i] * v[i];
        return sum;
    }

    private static void Axpy(double alpha, double[] x, double[] y, bool[] free)
    {
        for (var i = 0; i < x.Length; i++) if (free[i]) y[i] += alpha * x[i];
    }

    private static double Norm(double[] v)
    {
        var sum = 0.0;
        foreach (var value in v) sum += value * value;
        return Math.Sqrt(sum);
    }
}
