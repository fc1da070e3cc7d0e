// Sobol' low-discrepancy sequence in Gray-code order (Antonov & Saleev 1979) with the Joe & Kuo (2008)
// direction numbers; optional linear matrix scrambling plus digital shift (Matoušek 1998; Owen 2003).
namespace Runfold.Shared.Doe;

public static class SobolSequence
{
    /// <summary>Bits per coordinate, as SciPy uses by default; enough for 2^30 points.</summary>
    public const int Bits = 30;

    /// <summary>The largest dimension the direction-number table covers.</summary>
    public static int MaxDimensions => SobolDirectionNumbers.Table.Length;

    /// <summary>The first <paramref name="count"/> points in [0, 1)^<paramref name="dimensions"/>, one row per
    /// point. Unscrambled, the first point is the origin and the sequence equals
    /// <c>scipy.stats.qmc.Sobol(d, scramble=False).random(count)</c>. Scrambled, every 1-D projection of the first
    /// 2^m points still has exactly one point in each interval [i/2^m, (i+1)/2^m).</summary>
    public static double[,] Generate(int count, int dimensions, bool scramble = false, int seed = 0)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(count);
        ArgumentOutOfRangeException.ThrowIfLessThan(dimensions, 1);
        ArgumentOutOfRangeException.ThrowIfGreaterThan(dimensions, MaxDimensions);
        var directions = DirectionNumbers(dimensions);
        var shift = new uint[dimensions];
        if (scramble) Scramble(directions, shift, new Random(seed));

        const double scale = 1.0 / (1u << Bits);
        var points = new double[count, dimensions];
        if (count == 0) return points;
        var flat = System.Runtime.InteropServices.MemoryMarshal.CreateSpan(ref points[0, 0], count * dimensions);
        var byBit = new uint[Bits * dimensions]; // direction numbers grouped by bit, so one step reads one run of memory
        for (var j = 0; j < Bits; j++)
            for (var d = 0; d < dimensions; d++) byBit[j * dimensions + d] = directions[d, j];
        var current = (uint[])shift.Clone();
        for (var i = 0; i < count; i++)
        {
            if (i > 0)
            {
                // Gray-code step: flip by the direction number of the lowest zero bit of i − 1.
                var c = System.Numerics.BitOperations.TrailingZeroCount(~(uint)(i - 1));
                var step = byBit.AsSpan(c * dimensions, dimensions);
                for (var d = 0; d < dimensions; d++) current[d] ^= step[d];
            }
            var row = flat.Slice(i * dimensions, dimensions);
            for (var d = 0; d < dimensions; d++) row[d] = current[d] * scale;
        }
        return points;
    }

    /// <summary>v[d, j] = m_j · 2^(Bits − 1 − j): the recurrence of Bratley & Fox (1988) from the table's initial
    /// values and primitive polynomials.</summary>
    private static uint[,] DirectionNumbers(int dimensions)
    {
        var v = new uint[dimensions, Bits];
        for (var j = 0; j < Bits; j++) v[0, j] = 1;
        for (var d = 1; d < dimensions; d++)
        {
            var (polynomial, initial) = SobolDirectionNumbers.Table[d];
            var degree = 31 - System.Numerics.BitOperations.LeadingZeroCount((uint)polynomial);
            for (var j = 0; j < degree; j++) v[d, j] = (uint)initial[j];
            for (var j = degree; j < Bits; j++)
            {
                var next = v[d, j - degree];
                uint power = 1;
                for (var k = 0; k < degree; k++)
                {
                    power <<= 1;
                    if (((polynomial >> (degree - 1 - k)) & 1) != 0) next ^= power * v[d, j - k - 1];
                }
                v[d, j] = next;
            }
        }
        for (var j = 0; j < Bits; j++)
            for (var d = 0; d < dimensions; d++) v[d, j] <<= Bits - 1 - j;
        return v;
    }

    /// <summary>Left-multiplies each dimension's generator matrix by a random lower-triangular bit matrix with
    /// unit diagonal and draws a random digital shift.</summary>
    private static void Scramble(uint[,] directions, uint[] shift, Random random)
    {
        var dimensions = shift.Length;
        var lower = new uint[Bits]; // row r: the bits that output bit r (counted from the most significant) mixes in
        for (var d = 0; d < dimensions; d++)
        {
            for (var r = 0; r < Bits; r++)
            {
                uint row = 1u << (Bits - 1 - r); // unit diagonal
                for (var c = 0; c < r; c++)
                    if (random.Next(2) == 1) row |= 1u << (Bits - 1 - c);
                lower[r] = row;
            }
            for (var j = 0; j < Bits; j++)
            {
                var v = directions[d, j];
                uint scrambled = 0;
                for (var r = 0; r < Bits; r++)
                    if ((System.Numerics.BitOperations.PopCount(lower[r] & v) & 1) == 1) scrambled |= 1u << (Bits - 1 - r);
                directions[d, j] = scrambled;
            }
            shift[d] = (uint)random.Next(1 << Bits);
        }
    }
}
