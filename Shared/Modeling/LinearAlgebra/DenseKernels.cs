// Register-blocked matrix product kernels (the "micro-kernel" structure of Goto & van de Geijn 2008, "Anatomy of
// high-performance matrix multiplication", ACM TOMS 34(3)), written with System.Runtime.Intrinsics 256-bit vectors.
using System.Runtime.CompilerServices;
using System.Runtime.InteropServices;
using System.Runtime.Intrinsics;

namespace Runfold.Shared.Modeling.LinearAlgebra;

/// <summary>
/// C ± A·B on row-major arrays, where B is read in rows of 8 contiguous values and A element by element through
/// two strides (so A can be a matrix or its transpose without copying). Every tile of C is computed by one
/// thread in a fixed order, so results are the same bit for bit however the work is spread. 256-bit vectors
/// are used on every machine (emulated where the hardware lacks them) so the summation order never changes.
/// </summary>
internal static class DenseKernels
{
    private const int TileRows = 4;
    private const int TileColumns = 8;

    /// <summary>
    /// C[i, j] (+|−)= Σₖ A(i, k) · B[k, j] for i &lt; rows, j &lt; columns, k &lt; depth, with
    /// A(i, k) = a[aOffset + i·aRowStride + k·aColumnStride], B[k, j] = b[bOffset + k·ldb + j],
    /// C[i, j] = c[cOffset + i·ldc + j].
    /// </summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static void MultiplyAdd(
        double[] a, int aOffset, int aRowStride, int aColumnStride,
        double[] b, int bOffset, int ldb,
        double[] c, int cOffset, int ldc,
        int rows, int columns, int depth, bool subtract)
    {
        if (rows <= 0 || columns <= 0 || depth <= 0) return;
        var sign = subtract ? -1.0 : 1.0;
        var fullColumns = columns - columns % TileColumns;
        var fullRows = rows - rows % TileRows;
        for (var j = 0; j < fullColumns; j += TileColumns)
        {
            for (var i = 0; i < fullRows; i += TileRows)
                Tile4x8(a, aOffset + i * aRowStride, aRowStride, aColumnStride, b, bOffset + j, ldb, c, cOffset + i * ldc + j, ldc, depth, sign);
            for (var i = fullRows; i < rows; i++)
                Row1x8(a, aOffset + i * aRowStride, aColumnStride, b, bOffset + j, ldb, c, cOffset + i * ldc + j, depth, sign);
        }
        for (var j = fullColumns; j < columns; j++)
            for (var i = 0; i < rows; i++)
            {
                var sum = 0.0;
                var ai = aOffset + i * aRowStride;
                for (var k = 0; k < depth; k++) sum = Math.FusedMultiplyAdd(a[ai + k * aColumnStride], b[bOffset + k * ldb + j], sum);
                c[cOffset + i * ldc + j] += sign * sum;
            }
    }

    /// <summary>The 4 × 8 tile: eight accumulators stay in registers for the whole depth.</summary>
    [MethodImpl(MethodImplOptions.AggressiveInlining | MethodImplOptions.AggressiveOptimization)]
    public static void Tile4x8(
        double[] a, int aOffset, int aRowStride, int aColumnStride,
        double[] b, int bOffset, int ldb,
        double[] c, int cOffset, int ldc, int depth, double sign)
    {
        ref var a0 = ref MemoryMarshal.GetArrayDataReference(a);
        ref var b0 = ref MemoryMarshal.GetArrayDataReference(b);
        ref var c0 = ref MemoryMarshal.GetArrayDataReference(c);
        Vector256<double> c00 = default, c01 = default, c10 = default, c11 = default;
        Vector256<double> c20 = default, c21 = default, c30 = default, c31 = default;
        nint ak = aOffset, bk = bOffset;
        nint r1 = aRowStride, r2 = 2 * aRowStride, r3 = 3 * aRowStride;
        for (var k = 0; k < depth; k++)
        {
            var bl = Vector256.LoadUnsafe(ref b0, (nuint)bk);
            var bh = Vector256.LoadUnsafe(ref b0, (nuint)(bk + 4));
            var x0 = Vector256.Create(Unsafe.Add(ref a0, ak));
            var x1 = Vector256.Create(Unsafe.Add(ref a0, ak + r1));
            var x2 = Vector256.Create(Unsafe.Add(ref a0, ak + r2));
            var x3 = Vector256.Create(Unsafe.Add(ref a0, ak + r3));
            c00 = Vector256.FusedMultiplyAdd(x0, bl, c00);
            c01 = Vector256.FusedMultiplyAdd(x0, bh, c01);
            c10 = Vector256.FusedMultiplyAdd(x1, bl, c10);
            c11 = Vector256.FusedMultiplyAdd(x1, bh, c11);
            c20 = Vector256.FusedMultiplyAdd(x2, bl, c20);
            c21 = Vector256.FusedMultiplyAdd(x2, bh, c21);
            c30 = Vector256.FusedMultiplyAdd(x3, bl, c30);
            c31 = Vector256.FusedMultiplyAdd(x3, bh, c31);
            ak += aColumnStride;
            bk += ldb;
        }
        var s = Vector256.Create(sign);
        Store(ref c0, cOffset, c00, c01, s);
        Store(ref c0, cOffset + ldc, c10, c11, s);
        Store(ref c0, cOffset + 2 * ldc, c20, c21, s);
        Store(ref c0, cOffset + 3 * ldc, c30, c31, s);
    }

    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    private static void Row1x8(double[] a, int aOffset, int aColumnStride, double[] b, int bOffset, int ldb, double[] c, int cOffset, int depth, double sign)
    {
        ref var a0 = ref MemoryMarshal.GetArrayDataReference(a);
        ref var b0 = ref MemoryMarshal.GetArrayDataReference(b);
        ref var c0 = ref MemoryMarshal.GetArrayDataReference(c);
        Vector256<double> lo = default, hi = default;
        nint ak = aOffset, bk = bOffset;
        for (var k = 0; k < depth; k++)
        {
            var x = Vector256.Create(Unsafe.Add(ref a0, ak));
            lo = Vector256.FusedMultiplyAdd(x, Vector256.LoadUnsafe(ref b0, (nuint)bk), lo);
            hi = Vector256.FusedMultiplyAdd(x, Vector256.LoadUnsafe(ref b0, (nuint)(bk + 4)), hi);
            ak += aColumnStride;
            bk += ldb;
        }
        Store(ref c0, cOffset, lo, hi, Vector256.Create(sign));
    }

    [MethodImpl(MethodImplOptions.AggressiveInlining)]
    private static void Store(ref double c0, int offset, Vector256<double> lo, Vector256<double> hi, Vector256<double> sign)
    {
        var at = (nuint)offset;
        Vector256.FusedMultiplyAdd(sign, lo, Vector256.LoadUnsafe(ref c0, at)).StoreUnsafe(ref c0, at);
        Vector256.FusedMultiplyAdd(sign, hi, Vector256.LoadUnsafe(ref c0, at + 4)).StoreUnsafe(ref c0, at + 4);
    }

    /// <summary>Σ x[i]·y[i] over a contiguous stretch, in a fixed order.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static double Dot(double[] x, int xOffset, double[] y, int yOffset, int length)
    {
        ref var x0 = ref MemoryMarshal.GetArrayDataReference(x);
        ref var y0 = ref MemoryMarshal.GetArrayDataReference(y);
        Vector256<double> s0 = default, s1 = default;
        var i = 0;
        for (; i + 8 <= length; i += 8)
        {
            s0 = Vector256.FusedMultiplyAdd(Vector256.LoadUnsafe(ref x0, (nuint)(xOffset + i)), Vector256.LoadUnsafe(ref y0, (nuint)(yOffset + i)), s0);
            s1 = Vector256.FusedMultiplyAdd(Vector256.LoadUnsafe(ref x0, (nuint)(xOffset + i + 4)), Vector256.LoadUnsafe(ref y0, (nuint)(yOffset + i + 4)), s1);
        }
        var sum = Vector256.Sum(s0 + s1);
        for (; i < length; i++) sum = Math.FusedMultiplyAdd(x[xOffset + i], y[yOffset + i], sum);
        return sum;
    }

    /// <summary>y[i] += alpha·x[i] over a contiguous stretch.</summary>
    [MethodImpl(MethodImplOptions.AggressiveOptimization)]
    public static void AddScaled(double alpha, double[] x, int xOffset, double[] y, int yOffset, int length)
    {
        ref var x0 = ref MemoryMarshal.GetArrayDataReference(x);
        ref var y0 = ref MemoryMarshal.GetArrayDataReference(y);
        var a = Vector256.Create(alpha);
        var i = 0;
        for (; i + 4 <= length; i += 4)
        {
            var at = (nuint)(yOffset + i);
            Vector256.FusedMultiplyAdd(a, Vector256.LoadUnsafe(ref x0, (nuint)(xOffset + i)), Vector256.LoadUnsafe(ref y0, at)).StoreUnsafe(ref y0, at);
        }
        for (; i < length; i++) y[yOffset + i] = Math.FusedMultiplyAdd(alpha, x[xOffset + i], y[yOffset + i]);
    }
}
