// Radial basis function interpolation with a polynomial tail (Buhmann, Radial Basis Functions, 2003, ch. 5; Fasshauer,
// Meshfree Approximation Methods with MATLAB, 2007) and the shape parameter by Rippa's leave-one-out (Rippa 1999, ACM).
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Modeling.RadialBasis;

/// <summary>The radial function φ(r).</summary>
public enum RadialBasisKernel
{
    /// <summary>φ(r) = r³.</summary>
    Cubic,

    /// <summary>φ(r) = r² log r.</summary>
    ThinPlateSpline,

    /// <summary>φ(r) = √(r² + c²), shape c chosen by Rippa's leave-one-out.</summary>
    Multiquadric,
}

/// <summary>How radial basis functions are fitted (inputs in coded units, indicator columns for levels).</summary>
public sealed record RadialBasisOptions
{
    public RadialBasisKernel Kernel { get; init; } = RadialBasisKernel.Cubic;

    /// <summary>Smallest and largest multiquadric shape searched (coded units).</summary>
    public double ShapeLower { get; init; } = 0.02;

    public double ShapeUpper { get; init; } = 5;

    /// <summary>A multiquadric shape to use as given instead of searching for one.</summary>
    public double? Shape { get; init; }

    public static RadialBasisOptions Default { get; } = new();
}

/// <summary>Fits radial basis function interpolants with a linear polynomial tail.</summary>
public static class RadialBasisModel
{
    /// <summary>Runs needed: one more than the linear tail's terms, so every leave-one-out system is solvable.</summary>
    public static int RunsNeeded(FactorSpace space) => new TrendBasis(space, 1).Count + 1;

    public static RadialBasisSurrogate Fit(FactorSpace space, Matrix<double> coded, IReadOnlyList<double> observed,
        RadialBasisOptions? options = null, CancellationToken cancellation = default)
    {
        options ??= RadialBasisOptions.Default;
        TrainingData.Check(space, coded, observed);
        if (!(options.ShapeLower > 0 && options.ShapeUpper > options.ShapeLower))
            throw new ArgumentException("The shape bounds must be positive and increasing.", nameof(options));
        var needed = RunsNeeded(space);
        if (coded.RowCount < needed)
            throw new ArgumentException($"Radial basis functions with a linear tail need at least {needed} runs; there are {coded.RowCount}.", nameof(coded));
        var encoding = new FactorEncoding(space, dropFirstLevel: false);
        var tail = new TrendBasis(space, 1);
        var system = new RadialSystem(encoding.Encode(coded), encoding.ColumnCount, tail.Evaluate(coded), tail.Count, observed, options.Kernel);

        var shape = 0.0;
        RadialSystem.Solution? best = null;
        if (options.Kernel == RadialBasisKernel.Multiquadric && options.Shape is { } given)
        {
            if (!(given > 0)) throw new ArgumentException("The multiquadric shape must be positive.", nameof(options));
            shape = given;
            best = system.Solve(given);
        }
        else if (options.Kernel == RadialBasisKernel.Multiquadric)
        {
            // A coarse grid in log c, then golden-section refinement around the best grid point.
            double Score(double logShape, out RadialSystem.Solution? solution)
            {
                cancellation.ThrowIfCancellationRequested();
                solution = system.Solve(Math.Exp(logShape));
                return solution?.LeaveOneOutSquares ?? double.PositiveInfinity;
            }
            double lo = Math.Log(options.ShapeLower), hi = Math.Log(options.ShapeUpper);
            const int grid = 12;
            var bestLog = lo;
            var bestScore = double.PositiveInfinity;
            for (var g = 0; g < grid; g++)
            {
                var at = lo + (hi - lo) * g / (grid - 1);
                var score = Score(at, out var solution);
                if (score < bestScore) (bestScore, bestLog, best) = (score, at, solution);
            }
            var step = (hi - lo) / (grid - 1);
            double a = Math.Max(lo, bestLog - step), b = Math.Min(hi, bestLog + step);
            var ratio = (Math.Sqrt(5) - 1) / 2;
            double c = b - ratio * (b - a), d = a + ratio * (b - a);
            double fc = Score(c, out var sc), fd = Score(d, out var sd);
            for (var iteration = 0; iteration < 14; iteration++)
            {
                if (fc < fd) { b = d; d = c; fd = fc; sd = sc; c = b - ratio * (b - a); fc = Score(c, out sc); }
                else { a = c; c = d; fc = fd; sc = sd; d = a + ratio * (b - a); fd = Score(d, out sd); }
            }
            if (fc < bestScore) (bestScore, bestLog, best) = (fc, c, sc);
            if (fd < bestScore) (bestLog, best) = (d, sd);
            shape = Math.Exp(bestLog);
        }
        else
        {
            cancellation.ThrowIfCancellationRequested();
            best = system.Solve(0);
        }
        if (best is null)
            throw new InvalidOperationException("The radial basis system of these runs is singular; some runs may coincide.");
        return new RadialBasisSurrogate(space, encoding, tail, options.Kernel, shape, system, best, observed);
    }
}

/// <summary>The saddle-point system [Φ P; Pᵀ 0]·[λ; μ] = [y; 0] of one kernel and shape.</summary>
internal sealed class RadialSystem
{
    private readonly double[] _x;
    private readonly int _m;
    private readonly double[] _tail;
    private readonly int _q;
    private readonly IReadOnlyList<double> _y;

    public RadialSystem(double[] x, int m, double[] tail, int q, IReadOnlyList<double> y, RadialBasisKernel kernel)
    {
        _x = x;
        _m = m;
        _tail = tail;
        _q = q;
        _y = y;
        Kernel = kernel;
    }

    public RadialBasisKernel Kernel { get; }

    public double[] Points => _x;

    public int Columns => _m;

    public static double Phi(RadialBasisKernel kernel, double r2, double shape) => kernel switch
    {
        RadialBasisKernel.Cubic => r2 * Math.Sqrt(r2),
        RadialBasisKernel.ThinPlateSpline => r2 > 0 ? 0.5 * r2 * Math.Log(r2) : 0,
        _ => Math.Sqrt(r2 + shape * shape),
    };

    public sealed record Solution(double[] Weights, double[] TailCoefficients, double[] LeaveOneOutErrors, double LeaveOneOutSquares);

    public Solution? Solve(double shape)
    {
        var n = _y.Count;
        var size = n + _q;
        var a = Matrix<double>.Build.Dense(size, size);
        for (var i = 0; i < n; i++)
        {
            for (var j = 0; j < i; j++)
            {
                var r2 = 0.0;
                for (var k = 0; k < _m; k++)
                {
                    var h = _x[i * _m + k] - _x[j * _m + k];
                    r2 += h * h;
                }
                var phi = Phi(Kernel, r2, shape);
                a[i, j] = phi;
                a[j, i] = phi;
            }
            a[i, i] = Phi(Kernel, 0, shape);
            for (var t = 0; t < _q; t++)
            {
                a[i, n + t] = _tail[i * _q + t];
                a[n + t, i] = _tail[i * _q + t];
            }
        }
        var inverse = a.LU().Inverse();
        var rhs = Vector<double>.Build.Dense(size);
        for (var i = 0; i < n; i++) rhs[i] = _y[i];
        var c = inverse * rhs;
        // Rippa (1999): the leave-one-out error at run k is c_k / (A⁻¹)_kk.
        var errors = new double[n];
        var squares = 0.0;
        for (var k = 0; k < n; k++)
        {
            errors[k] = c[k] / inverse[k, k];
            squares += errors[k] * errors[k];
        }
        if (!double.IsFinite(squares)) return null;
        var weights = new double[n];
        for (var i = 0; i < n; i++) weights[i] = c[i];
        var tail = new double[_q];
        for (var t = 0; t < _q; t++) tail[t] = c[n + t];
        return new Solution(weights, tail, errors, squares);
    }
}

/// <summary>A fitted radial basis interpolant. It gives no standard deviation.</summary>
public sealed class RadialBasisSurrogate : ISurrogateModel
{
    private const int Chunk = 128;

    private readonly FactorEncoding _encoding;
    private readonly TrendBasis _tail;
    private readonly RadialSystem _system;
    private readonly RadialSystem.Solution _solution;

    internal RadialBasisSurrogate(FactorSpace space, FactorEncoding encoding, TrendBasis tail, RadialBasisKernel kernel, double shape,
        RadialSystem system, RadialSystem.Solution solution, IReadOnlyList<double> observed)
    {
        Space = space;
        _encoding = encoding;
        _tail = tail;
        Kernel = kernel;
        Shape = shape;
        _system = system;
        _solution = solution;
        CrossValidation = new CrossValidatedPredictions(
            [.. observed.Select((y, i) => y - solution.LeaveOneOutErrors[i])], CrossValidationMethod.LeaveOneOut, observed.Count);
    }

    public FactorSpace Space { get; }

    public bool HasUncertainty => false;

    public string Kind => "rbf";

    public string Description => Kernel switch
    {
        RadialBasisKernel.Cubic => "Radial basis functions, cubic, linear tail",
        RadialBasisKernel.ThinPlateSpline => "Radial basis functions, thin-plate spline, linear tail",
        _ => string.Create(System.Globalization.CultureInfo.InvariantCulture, $"Radial basis functions, multiquadric (shape {Shape:G3}), linear tail"),
    };

    public RadialBasisKernel Kernel { get; }

    /// <summary>The multiquadric shape c (0 for the other kernels).</summary>
    public double Shape { get; }

    /// <summary>Rippa's closed-form leave-one-out predictions.</summary>
    public CrossValidatedPredictions CrossValidation { get; }

    public Prediction Predict(Matrix<double> codedPoints)
    {
        ArgumentNullException.ThrowIfNull(codedPoints);
        var count = codedPoints.RowCount;
        var n = _solution.Weights.Length;
        var m = _system.Columns;
        var q = _tail.Count;
        var points = _system.Points;
        var features = new double[Chunk * m];
        var tailRows = new double[Chunk * q];
        var scratch = new double[_tail.ScratchLength(Chunk)];
        var mean = new double[count];
        for (var start = 0; start < count; start += Chunk)
        {
            var rows = Math.Min(Chunk, count - start);
            _encoding.Encode(codedPoints, start, rows, features);
            _tail.Evaluate(codedPoints, start, rows, tailRows, scratch);
            for (var r = 0; r < rows; r++)
            {
                var value = 0.0;
                for (var i = 0; i < n; i++)
                {
                    var r2 = 0.0;
                    for (var k = 0; k < m; k++)
                    {
                        var h = features[r * m + k] - points[i * m + k];
                        r2 += h * h;
                    }
                    value += _solution.Weights[i] * RadialSystem.Phi(Kernel, r2, Shape);
                }
                for (var t = 0; t < q; t++) value += _solution.TailCoefficients[t] * tailRows[r * q + t];
                mean[start + r] = value;
            }
        }
        return new Prediction(mean, null);
    }
}
