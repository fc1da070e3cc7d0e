// Blocked right-looking Cholesky factorisation, triangular inverse and inverse from the factor (Golub & Van Loan,
// Matrix Computations, 4th ed. 2013, §4.2.9 "block Cholesky" and §3.1 triangular systems), on DenseKernels.
using System.Runtime.CompilerServices;

namespace Runfold.Shared.Modeling.LinearAlgebra;

/// <summary>
/// Dense symmetric positive definite algebra on row-major n × n arrays. Only the lower triangle of the input is
/// read; the factor L (A = L·Lᵀ) overwrites it. Work on column panels of <see cref="BlockSize"/> goes through the
/// vectorised 4 × 8 tile of <see cref="DenseKernels"/>; the panels of large matrices are shared among threads by
/// tile, so results do not depend on the thread count.
/// </summary>
internal static class BlockedCholesky
{
    public const int BlockSize = 64;

    /// <summary>Work above this many multiply-adds per panel is spread over the processors.</summary>
    private const long ParallelWork = 4_000_000;

    /// <summary>Factors A in place (lower triangle). False when A is not numerically positive definite.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static bool TryFactor(double[] a, int n, double[]? panelScratch = null)
    {
        ArgumentNullException.ThrowIfNull(a);
        var panel = panelScratch is { } p && p.Length >= BlockSize * n ? p : new double[BlockSize * n];
        for (var k0 = 0; k0 < n; k0 += BlockSize)
        {
            var k1 = Math.Min(k0 + BlockSize, n);
            if (!FactorDiagonalBlock(a, n, k0, k1)) return false;
            SolvePanel(a, n, k0, k1);
            var rest = n - k1;
            if (rest == 0) break;
            var width = k1 - k0;
            // Panel transposed: P[k, j] = L[k1 + j, k0 + k], so the trailing update reads B in contiguous rows.
            for (var i = 0; i < rest; i++)
            {
                var row = (k1 + i) * n + k0;
                for (var k = 0; k < width; k++) panel[k * rest + i] = a[row + k];
            }
            UpdateTrailing(a, n, k0, k1, panel, rest, width);
        }
        return true;
    }

    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    private static bool FactorDiagonalBlock(double[] a, int n, int k0, int k1)
    {
        for (var j = k0; j < k1; j++)
        {
            var rowJ = j * n;
            var d = a[rowJ + j] - DenseKernels.Dot(a, rowJ + k0, a, rowJ + k0, j - k0);
            if (!(d > 0) || !double.IsFinite(d)) return false;
            var ljj = Math.Sqrt(d);
            a[rowJ + j] = ljj;
            for (var i = j + 1; i < k1; i++)
            {
                var rowI = i * n;
                a[rowI + j] = (a[rowI + j] - DenseKernels.Dot(a, rowI + k0, a, rowJ + k0, j - k0)) / ljj;
            }
        }
        return true;
    }

    /// <summary>Rows below the diagonal block: L[i, K] = A[i, K]·L[K, K]⁻ᵀ.</summary>
    private static void SolvePanel(double[] a, int n, int k0, int k1)
    {
        void Row(int i)
        {
            var rowI = i * n;
            for (var j = k0; j < k1; j++)
            {
                var rowJ = j * n;
                a[rowI + j] = (a[rowI + j] - DenseKernels.Dot(a, rowI + k0, a, rowJ + k0, j - k0)) / a[rowJ + j];
            }
        }
        var rows = n - k1;
        if ((long)rows * BlockSize * BlockSize / 2 > ParallelWork)
            Parallel.For(0, (rows + 63) / 64, chunk =>
            {
                var end = Math.Min(n, k1 + (chunk + 1) * 64);
                for (var i = k1 + chunk * 64; i < end; i++) Row(i);
            });
        else
            for (var i = k1; i < n; i++) Row(i);
    }

    /// <summary>A[i, j] −= Σₖ L[i, k]·L[j, k] for k1 ≤ j ≤ i, by 8-column strips (a strip may also write a few
    /// entries above the diagonal, which are never read).</summary>
    private static void UpdateTrailing(double[] a, int n, int k0, int k1, double[] panel, int rest, int width)
    {
        var strips = (rest + 7) / 8;
        void Strip(int s)
        {
            var j = s * 8;
            var columns = Math.Min(8, rest - j);
            // Rows i ≥ j of the trailing block (row index relative to k1).
            DenseKernels.MultiplyAdd(a, (k1 + j) * n + k0, n, 1, panel, j, rest, a, (k1 + j) * n + k1 + j, n,
                rest - j, columns, width, subtract: true);
        }
        if ((long)rest * rest * width / 2 > ParallelWork)
            Parallel.For(0, strips, Strip);
        else
            for (var s = 0; s < strips; s++) Strip(s);
    }

    /// <summary>Σ log L[i, i]·2 = log det A.</summary>
    public static double LogDeterminant(double[] l, int n)
    {
        var sum = 0.0;
        for (var i = 0; i < n; i++) sum += Math.Log(l[i * n + i]);
        return 2 * sum;
    }

    /// <summary>Solves L·y = b in place.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static void SolveLower(double[] l, int n, double[] b)
    {
        for (var i = 0; i < n; i++) b[i] = (b[i] - DenseKernels.Dot(l, i * n, b, 0, i)) / l[i * n + i];
    }

    /// <summary>Solves Lᵀ·x = y in place.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static void SolveLowerTransposed(double[] l, int n, double[] y)
    {
        for (var i = n - 1; i >= 0; i--)
        {
            var xi = y[i] / l[i * n + i];
            y[i] = xi;
            DenseKernels.AddScaled(-xi, l, i * n, y, 0, i);
        }
    }

    /// <summary>Solves A·x = b in place with A = L·Lᵀ.</summary>
    public static void Solve(double[] l, int n, double[] b)
    {
        SolveLower(l, n, b);
        SolveLowerTransposed(l, n, b);
    }

    /// <summary>
    /// X = L⁻¹ (lower, with zeros above the diagonal) into <paramref name="x"/>, by block rows:
    /// X[I, I] = L[I, I]⁻¹ and X[I, 0:i0] = −X[I, I]·(L[I, 0:i0]·X[0:i0, 0:i0]).
    /// </summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static void InvertLower(double[] l, int n, double[] x, double[]? scratch = null)
    {
        Array.Clear(x, 0, n * n);
        var t = scratch is { } given && given.Length >= BlockSize * n ? given : new double[BlockSize * n];
        for (var i0 = 0; i0 < n; i0 += BlockSize)
        {
            var i1 = Math.Min(i0 + BlockSize, n);
            var w = i1 - i0;
            for (var r = i0; r < i1; r++)
            {
                var lrr = l[r * n + r];
                x[r * n + r] = 1 / lrr;
                for (var c = i0; c < r; c++)
                {
                    var sum = 0.0;
                    for (var k = c; k < r; k++) sum += l[r * n + k] * x[k * n + c];
                    x[r * n + c] = -sum / lrr;
                }
            }
            if (i0 == 0) continue;
            // T (w × i0) = L[I, 0:i0]·X[0:i0, 0:i0]; X is lower, so strip c needs k ≥ c only.
            Array.Clear(t, 0, w * i0);
            var strips = (i0 + 7) / 8;
            void ProductStrip(int s)
            {
                var c = s * 8;
                DenseKernels.MultiplyAdd(l, i0 * n + c, n, 1, x, c * n + c, n, t, c, i0, w, Math.Min(8, i0 - c), i0 - c, subtract: false);
            }
            void ScaleStrip(int s)
            {
                var c = s * 8;
                // X[I, c…] = −X[I, I]·T[:, c…]  (X[I, I] lower: row r needs T rows ≤ r; zeros elsewhere are harmless).
                DenseKernels.MultiplyAdd(x, i0 * n + i0, n, 1, t, c, i0, x, i0 * n + c, n, w, Math.Min(8, i0 - c), w, subtract: true);
            }
            if ((long)w * i0 * i0 / 2 > ParallelWork)
            {
                Parallel.For(0, strips, ProductStrip);
                Parallel.For(0, strips, ScaleStrip);
            }
            else
            {
                for (var s = 0; s < strips; s++) ProductStrip(s);
                for (var s = 0; s < strips; s++) ScaleStrip(s);
            }
        }
    }

    /// <summary>A⁻¹ = XᵀX from X = L⁻¹ (full symmetric result in <paramref name="inverse"/>).</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static void InverseFromInverseFactor(double[] x, int n, double[] inverse)
    {
        Array.Clear(inverse, 0, n * n);
        var strips = (n + 7) / 8;
        void Strip(int s)
        {
            var j = s * 8;
            var columns = Math.Min(8, n - j);
            // Rows i ≥ j: inverse[i, j…] = Σ_{k ≥ i} X[k, i]·X[k, j…]; X[k, i] = 0 for k < i, so k starts at the tile.
            var i = j;
            for (; i + 4 <= n; i += 4)
            {
                if (columns == 8)
                    DenseKernels.Tile4x8(x, i * n + i, 1, n, x, i * n + j, n, inverse, i * n + j, n, n - i, 1.0);
                else
                    DenseKernels.MultiplyAdd(x, i * n + i, 1, n, x, i * n + j, n, inverse, i * n + j, n, 4, columns, n - i, subtract: false);
            }
            if (i < n)
                DenseKernels.MultiplyAdd(x, i * n + i, 1, n, x, i * n + j, n, inverse, i * n + j, n, n - i, columns, n - i, subtract: false);
        }
        if ((long)n * n * n / 6 > ParallelWork)
            Parallel.For(0, strips, Strip);
        else
            for (var s = 0; s < strips; s++) Strip(s);
        // The strips wrote the lower triangle (and a few entries above it); mirror the lower one.
        for (var i = 0; i < n; i++)
            for (var j = 0; j < i; j++) inverse[j * n + i] = inverse[i * n + j];
    }
}
