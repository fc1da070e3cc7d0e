using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Modeling;

/// <summary>The low-order polynomial that kriging and radial basis functions carry beside their kernel part:
/// nothing, a constant, or a constant plus one column per factor column (first level of a categorical factor
/// as baseline).</summary>
internal sealed class TrendBasis
{
    private readonly FactorEncoding? _linear;

    public TrendBasis(FactorSpace space, int degree)
    {
        Degree = degree;
        if (degree >= 1) _linear = new FactorEncoding(space, dropFirstLevel: true);
        Count = degree switch { < 0 => 0, 0 => 1, _ => 1 + _linear!.ColumnCount };
    }

    /// <summary>−1 none, 0 constant, 1 linear.</summary>
    public int Degree { get; }

    public int Count { get; }

    /// <summary>Rows start…start+count−1 as a row-major block (count × <see cref="Count"/>).</summary>
    public void Evaluate(Matrix<double> coded, int start, int count, double[] into, double[] encodedScratch)
    {
        if (Count == 0) return;
        if (_linear is null)
        {
            for (var r = 0; r < count; r++) into[r] = 1;
            return;
        }
        var m = _linear.ColumnCount;
        _linear.Encode(coded, start, count, encodedScratch);
        for (var r = 0; r < count; r++)
        {
            into[r * Count] = 1;
            for (var k = 0; k < m; k++) into[r * Count + 1 + k] = encodedScratch[r * m + k];
        }
    }

    public int ScratchLength(int rows) => _linear is null ? 0 : rows * _linear.ColumnCount;

    public double[] Evaluate(Matrix<double> coded)
    {
        var into = new double[coded.RowCount * Count];
        Evaluate(coded, 0, coded.RowCount, into, new double[ScratchLength(coded.RowCount)]);
        return into;
    }
}
