// Gaussian-process likelihood with the process variance profiled out and its analytic gradient (Rasmussen & Williams,
// Gaussian Processes for Machine Learning, 2006, eq. 5.8–5.9; generalised least squares trend as in Santner, Williams &
// Notz, The Design and Analysis of Computer Experiments, 2003, §3.3).
using System.Runtime.CompilerServices;
using Runfold.Shared.Modeling.LinearAlgebra;

namespace Runfold.Shared.Modeling.GaussianProcess;

/// <summary>
/// The numbers of one factorised covariance: C = R + g·I (R the correlation matrix, g the noise ratio), the trend
/// coefficients β, α = C⁻¹(y − Fβ), the process variance and the log likelihood. Shared by the likelihood search
/// and the fitted model.
/// </summary>
internal sealed class GaussianProcessLikelihood
{
    private const int ParallelRows = 256;

    private readonly double[] _features; // n × m, row-major
    private readonly double[] _y;        // standardised response
    private readonly double[] _trend;    // n × p trend basis, row-major
    private readonly int _n, _m, _p;
    private readonly CovarianceKernel _kernel;

    // Work space reused by every evaluation (the search calls this hundreds of times).
    private readonly double[] _matrix, _inverse, _panel, _scaled, _alpha, _cf, _column;
    private readonly double[] _normalFactor, _cfNormal; // Cholesky factor of FᵀC⁻¹F; C⁻¹F·(FᵀC⁻¹F)⁻¹

    public GaussianProcessLikelihood(double[] features, int columns, double[] y, double[] trend, int trendColumns, CovarianceKernel kernel)
    {
        _features = features;
        _m = columns;
        _y = y;
        _n = y.Length;
        _trend = trend;
        _p = trendColumns;
        _kernel = kernel;
        _matrix = new double[_n * _n];
        _inverse = new double[_n * _n];
        _panel = new double[BlockedCholesky.BlockSize * _n];
        _scaled = new double[_n * _m];
        _alpha = new double[_n];
        _cf = new double[_n * Math.Max(_p, 1)];
        _column = new double[_n];
        _normalFactor = new double[_p * _p];
        _cfNormal = new double[_n * _p];
    }

    public int Count => _n;

    public int Columns => _m;

    public int TrendColumns => _p;

    public CovarianceKernel Kernel => _kernel;

    /// <summary>Correlation as a function of the scaled squared distance d² = Σ (hₖ/ℓₖ)².</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    public static double Correlation(CovarianceKernel kernel, double d2)
    {
        switch (kernel)
        {
            case CovarianceKernel.SquaredExponential:
                return Math.Exp(-0.5 * d2);
            case CovarianceKernel.Matern32:
            {
                var d = Math.Sqrt(3 * d2);
                return (1 + d) * Math.Exp(-d);
            }
            default:
            {
                var d = Math.Sqrt(5 * d2);
                return (1 + d + d * d / 3) * Math.Exp(-d);
            }
        }
    }

    /// <summary>G with ∂r/∂log ℓₖ = G·(hₖ/ℓₖ)².</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    private static double GradientFactor(CovarianceKernel kernel, double d2)
    {
        switch (kernel)
        {
            case CovarianceKernel.SquaredExponential:
                return Math.Exp(-0.5 * d2);
            case CovarianceKernel.Matern32:
                return 3 * Math.Exp(-Math.Sqrt(3 * d2));
            default:
            {
                var d = Math.Sqrt(5 * d2);
                return 5.0 / 3 * (1 + d) * Math.Exp(-d);
            }
        }
    }

    private void Scale(ReadOnlySpan<double> lengthScales)
    {
        for (var i = 0; i < _n; i++)
            for (var k = 0; k < _m; k++) _scaled[i * _m + k] = _features[i * _m + k] / lengthScales[k];
    }

    private void Rows(Action<int> row)
    {
        if (_n >= ParallelRows) Parallel.For(0, _n, row);
        else for (var i = 0; i < _n; i++) row(i);
    }

    private void BuildCorrelation(double noiseRatio)
    {
        var n = _n;
        var m = _m;
        var z = _scaled;
        var c = _matrix;
        var kernel = _kernel;
        Rows(i =>
        {
            var zi = i * m;
            var row = i * n;
            for (var j = 0; j < i; j++)
            {
                var zj = j * m;
                var d2 = 0.0;
                for (var k = 0; k < m; k++)
                {
                    var h = z[zi + k] - z[zj + k];
                    d2 += h * h;
                }
                c[row + j] = Correlation(kernel, d2);
            }
            c[row + i] = 1 + noiseRatio;
        });
    }

    /// <summary>
    /// Factorises C for the given length scales and noise ratio and solves for the trend and α. False when C (or
    /// FᵀC⁻¹F) is not numerically positive definite. On success <see cref="Factor"/> holds L (C = L·Lᵀ).
    /// </summary>
    private bool Factorise(ReadOnlySpan<double> lengthScales, double noiseRatio, double[] beta, out double quadratic, out double logDet)
    {
        quadratic = logDet = double.NaN;
        Scale(lengthScales);
        BuildCorrelation(noiseRatio);
        if (!BlockedCholesky.TryFactor(_matrix, _n, _panel)) return false;
        logDet = BlockedCholesky.LogDeterminant(_matrix, _n);
        Array.Copy(_y, _alpha, _n);
        if (_p > 0)
        {
            // C⁻¹F column by column, then β = (FᵀC⁻¹F)⁻¹ FᵀC⁻¹y.
            for (var t = 0; t < _p; t++)
            {
                for (var i = 0; i < _n; i++) _column[i] = _trend[i * _p + t];
                BlockedCholesky.Solve(_matrix, _n, _column);
                for (var i = 0; i < _n; i++) _cf[i * _p + t] = _column[i];
            }
            var normal = new double[_p * _p];
            var right = new double[_p];
            for (var s = 0; s < _p; s++)
            {
                for (var t = 0; t <= s; t++)
                {
                    var sum = 0.0;
                    for (var i = 0; i < _n; i++) sum += _trend[i * _p + s] * _cf[i * _p + t];
                    normal[s * _p + t] = sum;
                }
                var r = 0.0;
                for (var i = 0; i < _n; i++) r += _cf[i * _p + s] * _y[i];
                right[s] = r;
            }
            if (!BlockedCholesky.TryFactor(normal, _p)) return false;
            Array.Copy(normal, _normalFactor, _p * _p);
            BlockedCholesky.Solve(normal, _p, right);
            Array.Copy(right, beta, _p);
            for (var i = 0; i < _n; i++)
            {
                var fitted = 0.0;
                for (var t = 0; t < _p; t++) fitted += _trend[i * _p + t] * beta[t];
                _alpha[i] = _y[i] - fitted;
            }
        }
        var residual = (double[])_alpha.Clone();
        BlockedCholesky.Solve(_matrix, _n, _alpha);
        quadratic = 0.0;
        for (var i = 0; i < _n; i++) quadratic += residual[i] * _alpha[i];
        return double.IsFinite(quadratic) && double.IsFinite(logDet);
    }

    /// <summary>
    /// Negative profiled log likelihood at θ = (log ℓ₁ … log ℓₘ [, log g]) and its gradient; +∞ where the
    /// covariance cannot be factorised. The process variance is σ̂² = (y − Fβ)ᵀC⁻¹(y − Fβ)/n.
    /// </summary>
    public double NegativeLogLikelihood(double[] theta, double[] gradient, double fixedNoiseRatio, bool noiseEstimated, bool restricted)
    {
        Span<double> lengthScales = stackalloc double[_m];
        for (var k = 0; k < _m; k++) lengthScales[k] = Math.Exp(theta[k]);
        var g = noiseEstimated ? Math.Exp(theta[_m]) : fixedNoiseRatio;
        var beta = new double[_p];
        if (!Factorise(lengthScales, g, beta, out var quadratic, out var logDet)) return double.PositiveInfinity;
        var dof = restricted ? _n - _p : _n;
        var sigma2 = Math.Max(quadratic / dof, 1e-300);
        var value = 0.5 * dof * Math.Log(2 * Math.PI * sigma2) + 0.5 * logDet + 0.5 * dof;
        if (restricted && _p > 0)
        {
            // Restricted likelihood (Patterson & Thompson 1971): + ½ log det FᵀC⁻¹F, and C⁻¹ becomes the projection
            // Q = C⁻¹ − C⁻¹F(FᵀC⁻¹F)⁻¹FᵀC⁻¹ in the gradient.
            value += 0.5 * BlockedCholesky.LogDeterminant(_normalFactor, _p);
            var row = new double[_p];
            for (var i = 0; i < _n; i++)
            {
                for (var t = 0; t < _p; t++) row[t] = _cf[i * _p + t];
                BlockedCholesky.Solve(_normalFactor, _p, row);
                for (var t = 0; t < _p; t++) _cfNormal[i * _p + t] = row[t];
            }
        }

        // C⁻¹ for the trace term: X = L⁻¹ (into _inverse), then C⁻¹ = XᵀX (into _matrix, L is no longer needed).
        BlockedCholesky.InvertLower(_matrix, _n, _inverse, _panel);
        BlockedCholesky.InverseFromInverseFactor(_inverse, _n, _matrix);
        AccumulateGradient(sigma2, g, noiseEstimated, restricted && _p > 0, gradient);
        return value;
    }

    /// <summary>∂(−log L)/∂θ = −½ tr((ααᵀ/σ̂² − C⁻¹)·∂C/∂θ), summed over pairs in fixed row blocks.</summary>
    private void AccumulateGradient(double sigma2, double noiseRatio, bool noiseEstimated, bool projected, double[] gradient)
    {
        var p = projected ? _p : 0;
        var cf = _cf;
        var cfNormal = _cfNormal;
        var n = _n;
        var m = _m;
        var z = _scaled;
        var inv = _matrix;
        var alpha = _alpha;
        var kernel = _kernel;
        var blocks = n >= ParallelRows ? 16 : 1;
        var partial = new double[blocks * m];
        void Block(int b)
        {
            var from = (int)((long)n * b / blocks);
            var to = (int)((long)n * (b + 1) / blocks);
            var offset = b * m;
            for (var i = from; i < to; i++)
            {
                var zi = i * m;
                var ai = alpha[i] / sigma2;
                for (var j = 0; j < i; j++)
                {
                    var zj = j * m;
                    var d2 = 0.0;
                    for (var k = 0; k < m; k++)
                    {
                        var h = z[zi + k] - z[zj + k];
                        d2 += h * h;
                    }
                    var q = inv[i * n + j];
                    for (var t = 0; t < p; t++) q -= cfNormal[i * p + t] * cf[j * p + t];
                    var w = (ai * alpha[j] - q) * GradientFactor(kernel, d2);
                    for (var k = 0; k < m; k++)
                    {
                        var h = z[zi + k] - z[zj + k];
                        partial[offset + k] += w * h * h;
                    }
                }
            }
        }
        if (blocks > 1) Parallel.For(0, blocks, Block);
        else Block(0);
        for (var k = 0; k < m; k++)
        {
            var sum = 0.0;
            for (var b = 0; b < blocks; b++) sum += partial[b * m + k];
            gradient[k] = -sum;
        }
        if (noiseEstimated)
        {
            var trace = 0.0;
            for (var i = 0; i < n; i++)
            {
                var q = inv[i * n + i];
                for (var t = 0; t < p; t++) q -= cfNormal[i * p + t] * cf[i * p + t];
                trace += alpha[i] * alpha[i] / sigma2 - q;
            }
            gradient[m] = -0.5 * noiseRatio * trace;
        }
    }

    /// <summary>
    /// Everything prediction and leave-one-out need, at fixed hyper-parameters. With
    /// <paramref name="signalVariance"/> null the process variance is its profiled estimate σ̂².
    /// </summary>
    public GaussianProcessSolution? Solve(IReadOnlyList<double> lengthScales, double noiseRatio, double? signalVariance)
    {
        var scales = lengthScales.ToArray();
        var beta = new double[_p];
        if (!Factorise(scales, noiseRatio, beta, out var quadratic, out var logDet)) return null;
        var sigma2 = signalVariance ?? Math.Max(quadratic / _n, 1e-300);
        var logLikelihood = -0.5 * quadratic / sigma2 - 0.5 * logDet - 0.5 * _n * Math.Log(2 * Math.PI * sigma2);

        // Keep L⁻¹ transposed (U = L⁻ᵀ, upper) for the predictive variance; C⁻¹ for leave-one-out.
        BlockedCholesky.InvertLower(_matrix, _n, _inverse, _panel);
        var upper = new double[_n * _n];
        for (var i = 0; i < _n; i++)
            for (var j = 0; j <= i; j++) upper[j * _n + i] = _inverse[i * _n + j];
        BlockedCholesky.InverseFromInverseFactor(_inverse, _n, _matrix);

        // (FᵀC⁻¹F)⁻¹ by columns from its factor, for the trend part of the variance and leave-one-out.
        var normalInverse = new double[_p * _p];
        var e = new double[_p];
        for (var t = 0; t < _p; t++)
        {
            Array.Clear(e);
            e[t] = 1;
            BlockedCholesky.Solve(_normalFactor, _p, e);
            for (var s = 0; s < _p; s++) normalInverse[s * _p + t] = e[s];
        }

        // Dubrule (1983): leave-one-out residual eᵢ = αᵢ / Qᵢᵢ with Q = C⁻¹ − C⁻¹F(FᵀC⁻¹F)⁻¹FᵀC⁻¹.
        var q = new double[_n];
        for (var i = 0; i < _n; i++)
        {
            var value = _matrix[i * _n + i];
            for (var s = 0; s < _p; s++)
                for (var t = 0; t < _p; t++) value -= _cf[i * _p + s] * normalInverse[s * _p + t] * _cf[i * _p + t];
            q[i] = value;
        }

        return new GaussianProcessSolution(
            _kernel, scales, noiseRatio, sigma2, logLikelihood, beta, (double[])_alpha.Clone(), upper,
            _p > 0 ? _cf[..(_n * _p)] : [], normalInverse, (double[])_scaled.Clone(), _m, q);
    }
}

/// <summary>The factorised Gaussian process at its hyper-parameters (standardised response units).</summary>
internal sealed record GaussianProcessSolution(
    CovarianceKernel Kernel,
    double[] LengthScales,
    double NoiseRatio,
    double SignalVariance,
    double LogLikelihood,
    double[] Beta,
    double[] Alpha,
    double[] UpperInverseFactor,
    double[] InverseTimesTrend,
    double[] NormalInverse,
    double[] ScaledFeatures,
    int Columns,
    double[] LeaveOneOutPrecision)
{
    public int Count => Alpha.Length;
}
