// Expected improvement (Jones, Schonlau & Welch 1998, "Efficient global optimization of expensive black-box
// functions", J. Global Optim. 13, eq. 15) and its Monte Carlo form for the overall desirability.
using MathNet.Numerics.Distributions;

namespace Runfold.Shared.Optimization;

public static class ExpectedImprovement
{
    /// <summary>E[max(best − Y, 0)] for Y ~ N(mean, sd²): (best − μ)Φ(z) + σφ(z), z = (best − μ)/σ; max(best − μ, 0)
    /// when σ = 0.</summary>
    public static double BelowBest(double mean, double sd, double best)
    {
        var gain = best - mean;
        if (!(sd > 0)) return Math.Max(gain, 0);
        var z = gain / sd;
        return Math.Max(gain * Normal.CDF(0, 1, z) + sd * Normal.PDF(0, 1, z), 0);
    }

    /// <summary>E[max(Y − best, 0)]: the improvement of a response to be maximised.</summary>
    public static double AboveBest(double mean, double sd, double best) => BelowBest(-mean, sd, -best);

    /// <summary>
    /// Standard normal draws for the Monte Carlo expected improvement of a desirability: the inverse normal CDF of a
    /// scrambled Sobol' sequence (count × dimensions), so the same draws serve every point (common random numbers,
    /// which keeps the estimate smooth enough for a local search).
    /// </summary>
    internal static double[][] NormalDraws(int count, int dimensions, int seed)
    {
        var unit = Doe.SobolSequence.Generate(count, Math.Max(dimensions, 1), scramble: true, seed: seed);
        var draws = new double[count][];
        for (var s = 0; s < count; s++)
        {
            draws[s] = new double[dimensions];
            for (var r = 0; r < dimensions; r++)
                draws[s][r] = Normal.InvCDF(0, 1, Math.Clamp(unit[s, r], 1e-12, 1 - 1e-12));
        }
        return draws;
    }
}
