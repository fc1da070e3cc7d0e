// Linear least squares by Householder QR with the hat-matrix diagonal and PRESS (Montgomery, Peck & Vining,
// Introduction to Linear Regression Analysis, 5th ed. 2012, §3.2 and §4.3; Allen 1974 for PRESS).
using MathNet.Numerics.LinearAlgebra;

namespace Runfold.Shared.Modeling.Polynomial;

/// <summary>One least-squares solution: coefficients, fitted values, residual sum of squares, leverages and
/// (XᵀX)⁻¹. Null from <see cref="Fit"/> when the columns are (numerically) linearly dependent.</summary>
internal sealed class LeastSquares
{
    private LeastSquares(double[] beta, double[] fitted, double sse, double[] leverage, Matrix<double> covariance)
    {
        Beta = beta;
        Fitted = fitted;
        ResidualSumOfSquares = sse;
        Leverage = leverage;
        UnscaledCovariance = covariance;
    }

    public double[] Beta { get; }

    public double[] Fitted { get; }

    public double ResidualSumOfSquares { get; }

    public double[] Leverage { get; }

    /// <summary>(XᵀX)⁻¹.</summary>
    public Matrix<double> UnscaledCovariance { get; }

    /// <summary>Σ (eᵢ / (1 − hᵢᵢ))²; +∞ when a run has leverage 1 (its leave-one-out fit is not defined).</summary>
    public double Press(IReadOnlyList<double> y)
    {
        var press = 0.0;
        for (var i = 0; i < y.Count; i++)
        {
            var denominator = 1 - Leverage[i];
            if (denominator < 1e-10) return double.PositiveInfinity;
            var e = (y[i] - Fitted[i]) / denominator;
            press += e * e;
        }
        return press;
    }

    /// <summary>Householder QR of X (n × p, n ≥ p), sequential and allocation-light: designs are small and the
    /// stepwise search fits many of them.</summary>
    public static LeastSquares? Fit(Matrix<double> x, IReadOnlyList<double> y)
    {
        var n = x.RowCount;
        var p = x.ColumnCount;
        if (n < p) return null;
        // Column-major working copy; the reflectors overwrite it below the diagonal, R above.
        var a = new double[n * p];
        for (var j = 0; j < p; j++)
            for (var i = 0; i < n; i++) a[j * n + i] = x[i, j];
        var columnNorms = new double[p];
        for (var j = 0; j < p; j++)
        {
            var sum = 0.0;
            for (var i = 0; i < n; i++) sum += a[j * n + i] * a[j * n + i];
            columnNorms[j] = Math.Sqrt(sum);
        }
        var tau = new double[p];
        var diagonal = new double[p];
        for (var k = 0; k < p; k++)
        {
            var col = k * n;
            var norm = 0.0;
            for (var i = k; i < n; i++) norm += a[col + i] * a[col + i];
            norm = Math.Sqrt(norm);
            // A column that is (numerically) a combination of the earlier ones leaves nothing to reflect.
            if (!(norm > 1e-10 * Math.Max(columnNorms[k], double.Epsilon))) return null;
            var alpha = a[col + k] > 0 ? -norm : norm;
            var v0 = a[col + k] - alpha;
            for (var i = k + 1; i < n; i++) a[col + i] /= v0;
            a[col + k] = 1;
            tau[k] = -v0 / alpha;
            diagonal[k] = alpha;
            for (var j = k + 1; j < p; j++)
            {
                var other = j * n;
                var dot = 0.0;
                for (var i = k; i < n; i++) dot += a[col + i] * a[other + i];
                dot *= tau[k];
                for (var i = k; i < n; i++) a[other + i] -= dot * a[col + i];
            }
        }

        // Qᵀy, then back substitution for β.
        var qty = y.ToArray();
        ApplyReflectors(a, tau, n, p, qty, transpose: true);
        var beta = new double[p];
        for (var k = p - 1; k >= 0; k--)
        {
            var sum = qty[k];
            for (var j = k + 1; j < p; j++) sum -= R(a, diagonal, n, k, j) * beta[j];
            beta[k] = sum / diagonal[k];
        }
        var fitted = new double[n];
        var sse = 0.0;
        for (var i = 0; i < n; i++)
        {
            var v = 0.0;
            for (var j = 0; j < p; j++) v += x[i, j] * beta[j];
            fitted[i] = v;
            sse += (y[i] - v) * (y[i] - v);
        }

        // Leverages: squared row norms of the thin Q, built column by column from the reflectors.
        var leverage = new double[n];
        var e = new double[n];
        for (var j = 0; j < p; j++)
        {
            Array.Clear(e);
            e[j] = 1;
            ApplyReflectors(a, tau, n, p, e, transpose: false);
            for (var i = 0; i < n; i++) leverage[i] += e[i] * e[i];
        }

        // (XᵀX)⁻¹ = R⁻¹R⁻ᵀ from the inverse of the upper triangle.
        var rInverse = Matrix<double>.Build.Dense(p, p);
        for (var c = 0; c < p; c++)
        {
            rInverse[c, c] = 1 / diagonal[c];
            for (var r = c - 1; r >= 0; r--)
            {
                var sum = 0.0;
                for (var k = r + 1; k <= c; k++) sum += R(a, diagonal, n, r, k) * rInverse[k, c];
                rInverse[r, c] = -sum / diagonal[r];
            }
        }
        var covariance = Matrix<double>.Build.Dense(p, p);
        for (var r = 0; r < p; r++)
            for (var c = 0; c <= r; c++)
            {
                var sum = 0.0;
                for (var k = Math.Max(r, c); k < p; k++) sum += rInverse[r, k] * rInverse[c, k];
                covariance[r, c] = covariance[c, r] = sum;
            }
        return new LeastSquares(beta, fitted, sse, leverage, covariance);
    }

    private static double R(double[] a, double[] diagonal, int n, int row, int column) => row == column ? diagonal[row] : a[column * n + row];

    /// <summary>v ← Qᵀv (transpose) or Qv, Q = H₀H₁…H_{p−1}, Hₖ = I − τₖ uₖuₖᵀ with uₖ stored below the diagonal.</summary>
    private static void ApplyReflectors(double[] a, double[] tau, int n, int p, double[] v, bool transpose)
    {
        for (var step = 0; step < p; step++)
        {
            var k = transpose ? step : p - 1 - step;
            var col = k * n;
            var dot = v[k];
            for (var i = k + 1; i < n; i++) dot += a[col + i] * v[i];
            dot *= tau[k];
            v[k] -= dot;
            for (var i = k + 1; i < n; i++) v[i] -= dot * a[col + i];
        }
    }
}
