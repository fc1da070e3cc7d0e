// Published test functions for surrogate, sensitivity and optimisation checks, as defined in the Virtual Library
// of Simulation Experiments (Surjanovic & Bingham, https://www.sfu.ca/~ssurjano/), with the papers each cites.
// Shared by Tests/Shared.Tests and Tests/Benchmarks (linked source); inputs are in each function's natural domain.

namespace Runfold.TestFunctions;

/// <summary>A published test function on a box domain, with its known optimum where one is published.</summary>
public sealed record TestFunction(
    string Name,
    double[] Lower,
    double[] Upper,
    Func<double[], double> Evaluate,
    double? KnownMinimum = null)
{
    public int Dimension => Lower.Length;

    /// <summary>Maps a point of the unit cube [0,1]^d onto the domain.</summary>
    public double[] FromUnit(ReadOnlySpan<double> u)
    {
        var x = new double[Dimension];
        for (var j = 0; j < Dimension; j++) x[j] = Lower[j] + u[j] * (Upper[j] - Lower[j]);
        return x;
    }

    /// <summary>Maps a coded point (−1…+1 per input) onto the domain.</summary>
    public double[] FromCoded(ReadOnlySpan<double> c)
    {
        var x = new double[Dimension];
        for (var j = 0; j < Dimension; j++) x[j] = Lower[j] + (c[j] + 1) / 2 * (Upper[j] - Lower[j]);
        return x;
    }
}

public static class PublishedTestFunctions
{
    /// <summary>Branin (Dixon & Szegő 1978; VLSE "Branin"): x1 ∈ [−5, 10], x2 ∈ [0, 15]; global minimum
    /// 0.397887 at (−π, 12.275), (π, 2.275) and (9.42478, 2.475).</summary>
    public static TestFunction Branin { get; } = new("Branin", [-5, 0], [10, 15], x =>
    {
        const double a = 1, b = 5.1 / (4 * Math.PI * Math.PI), c = 5 / Math.PI, r = 6, s = 10, t = 1 / (8 * Math.PI);
        var q = x[1] - b * x[0] * x[0] + c * x[0] - r;
        return a * q * q + s * (1 - t) * Math.Cos(x[0]) + s;
    }, KnownMinimum: 0.397887);

    private static readonly double[] HartmannAlpha = [1.0, 1.2, 3.0, 3.2];

    private static readonly double[,] HartmannA =
    {
        { 10, 3, 17, 3.5, 1.7, 8 },
        { 0.05, 10, 17, 0.1, 8, 14 },
        { 3, 3.5, 1.7, 10, 17, 8 },
        { 17, 8, 0.05, 10, 0.1, 14 },
    };

    private static readonly double[,] HartmannP =
    {
        { 0.1312, 0.1696, 0.5569, 0.0124, 0.8283, 0.5886 },
        { 0.2329, 0.4135, 0.8307, 0.3736, 0.1004, 0.9991 },
        { 0.2348, 0.1451, 0.3522, 0.2883, 0.3047, 0.6650 },
        { 0.4047, 0.8828, 0.8732, 0.5743, 0.1091, 0.0381 },
    };

    /// <summary>Hartmann 6-D (Dixon & Szegő 1978; VLSE "Hartmann 6-D"): x ∈ [0, 1]^6; global minimum −3.32237 at
    /// (0.20169, 0.150011, 0.476874, 0.275332, 0.311652, 0.6573).</summary>
    public static TestFunction Hartmann6 { get; } = new("Hartmann-6", new double[6], [1, 1, 1, 1, 1, 1], x =>
    {
        var sum = 0.0;
        for (var i = 0; i < 4; i++)
        {
            var inner = 0.0;
            for (var j = 0; j < 6; j++)
            {
                var d = x[j] - HartmannP[i, j];
                inner += HartmannA[i, j] * d * d;
            }
            sum += HartmannAlpha[i] * Math.Exp(-inner);
        }
        return -sum;
    }, KnownMinimum: -3.32237);

    /// <summary>Borehole (Harper & Gupta 1983; VLSE "Borehole Function"): water flow rate in m³/yr through a
    /// borehole. Inputs rw ∈ [0.05, 0.15], r ∈ [100, 50000], Tu ∈ [63070, 115600], Hu ∈ [990, 1110],
    /// Tl ∈ [63.1, 116], Hl ∈ [700, 820], L ∈ [1120, 1680], Kw ∈ [9855, 12045].</summary>
    public static TestFunction Borehole { get; } = new("Borehole",
        [0.05, 100, 63070, 990, 63.1, 700, 1120, 9855],
        [0.15, 50000, 115600, 1110, 116, 820, 1680, 12045], x =>
        {
            double rw = x[0], r = x[1], tu = x[2], hu = x[3], tl = x[4], hl = x[5], l = x[6], kw = x[7];
            var logRatio = Math.Log(r / rw);
            return 2 * Math.PI * tu * (hu - hl) / (logRatio * (1 + 2 * l * tu / (logRatio * rw * rw * kw) + tu / tl));
        });

    /// <summary>Ishigami (Ishigami & Homma 1990; VLSE "Ishigami Function") with a = 7, b = 0.1 by default:
    /// x ∈ [−π, π]^3.</summary>
    public static TestFunction Ishigami(double a = 7, double b = 0.1) => new("Ishigami", [-Math.PI, -Math.PI, -Math.PI], [Math.PI, Math.PI, Math.PI],
        x => Math.Sin(x[0]) + a * Math.Pow(Math.Sin(x[1]), 2) + b * Math.Pow(x[2], 4) * Math.Sin(x[0]));

    /// <summary>Analytic Sobol' indices of the Ishigami function (Ishigami & Homma 1990; the closed forms as given in
    /// Saltelli et al., Global Sensitivity Analysis: The Primer, 2008, and VLSE). Returns first-order and total
    /// indices of x1, x2, x3.</summary>
    public static (double[] FirstOrder, double[] Total) IshigamiIndices(double a = 7, double b = 0.1)
    {
        var pi4 = Math.Pow(Math.PI, 4);
        var v1 = 0.5 * Math.Pow(1 + b * pi4 / 5, 2);
        var v2 = a * a / 8;
        var v13 = b * b * Math.Pow(Math.PI, 8) * (1.0 / 18 - 1.0 / 50);
        var variance = v1 + v2 + v13;
        return ([v1 / variance, v2 / variance, 0], [(v1 + v13) / variance, v2 / variance, v13 / variance]);
    }
}

/// <summary>Two-objective test problems ZDT1 and ZDT2 (Zitzler, Deb & Thiele 2000, "Comparison of multiobjective
/// evolutionary algorithms: empirical results", Evolutionary Computation 8(2)); x ∈ [0, 1]^n, both objectives
/// minimised. On the Pareto-optimal front x2…xn = 0 and f2 = 1 − √f1 (ZDT1) or 1 − f1² (ZDT2).</summary>
public static class ZdtProblems
{
    public static (double F1, double F2) Zdt1(ReadOnlySpan<double> x)
    {
        var g = G(x);
        return (x[0], g * (1 - Math.Sqrt(x[0] / g)));
    }

    public static (double F1, double F2) Zdt2(ReadOnlySpan<double> x)
    {
        var g = G(x);
        return (x[0], g * (1 - Math.Pow(x[0] / g, 2)));
    }

    public static double Zdt1Front(double f1) => 1 - Math.Sqrt(f1);

    public static double Zdt2Front(double f1) => 1 - f1 * f1;

    private static double G(ReadOnlySpan<double> x)
    {
        var sum = 0.0;
        for (var i = 1; i < x.Length; i++) sum += x[i];
        return 1 + 9 * sum / (x.Length - 1);
    }
}
