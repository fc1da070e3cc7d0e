// Expected improvement (Jones, Schonlau & Welch 1998, "Efficient global optimization of expensive black-box
// functions", J. Global Optim. 13, eq. 15), its logarithm computed without underflow or cancellation (LogEI of Ament,
// Daulton, Eriksson, Balandat & Bakshy 2023, "Unexpected improvements to expected improvement for Bayesian
// optimization", NeurIPS 36), and its Monte Carlo form for the overall desirability.
using MathNet.Numerics;
using MathNet.Numerics.Distributions;

namespace Runfold.Shared.Optimization;

public static class ExpectedImprovement
{
    /// <summary>Beyond this distance below zero, ln h(z) uses the asymptotic series instead of erfc.</summary>
    private const double SeriesFrom = 25;

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
    /// ln E[max(best − Y, 0)] = ln σ + ln h(z), h(z) = zΦ(z) + φ(z): accurate to a few units in the last place also
    /// where the improvement itself underflows to zero (z below about −38) or loses its digits to cancellation
    /// (z below about −5), so a search can still rank and climb points the surrogate thinks unlikely to improve.
    /// −∞ when σ = 0 and the mean is no better than <paramref name="best"/>.
    /// </summary>
    public static double LogBelowBest(double mean, double sd, double best)
    {
        var gain = best - mean;
        if (!(sd > 0)) return gain > 0 ? Math.Log(gain) : double.NegativeInfinity;
        return Math.Log(sd) + LogH(gain / sd);
    }

    /// <summary>ln E[max(Y − best, 0)]: the improvement of a response to be maximised, on the log scale.</summary>
    public static double LogAboveBest(double mean, double sd, double best) => LogBelowBest(-mean, sd, -best);

    /// <summary>
    /// ln h(z), h(z) = zΦ(z) + φ(z). For z ≤ −1, h(z) = φ(z)(1 − x·R(x)) with x = −z and Mills' ratio
    /// R(x) = Φ(−x)/φ(x) = √(π/2)·exp(x²/2)·erfc(x/√2), so the Gaussian factor is taken on the log scale; beyond
    /// x = 25, 1 − x·R(x) = x⁻² − 3x⁻⁴ + 15x⁻⁶ − 105x⁻⁸ + 945x⁻¹⁰ − … (the asymptotic series of R; the first omitted
    /// term is below 1e-8 of the sum there).
    /// </summary>
    internal static double LogH(double z)
    {
        if (double.IsNaN(z)) return double.NaN;
        if (z > -1) return Math.Log(z * Normal.CDF(0, 1, z) + Normal.PDF(0, 1, z));
        var x = -z;
        const double halfLogTwoPi = 0.91893853320467274178;
        double remainder;
        if (x <= SeriesFrom)
            remainder = 1 - x * Math.Sqrt(Math.PI / 2) * Math.Exp(x * x / 2) * SpecialFunctions.Erfc(x / Constants.Sqrt2);
        else
        {
            var u = 1 / (x * x);
            remainder = u * (1 - u * (3 - u * (15 - u * (105 - u * 945))));
        }
        return -x * x / 2 - halfLogTwoPi + Math.Log(remainder);
    }

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
