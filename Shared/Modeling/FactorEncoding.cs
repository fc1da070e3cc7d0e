using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Modeling;

/// <summary>
/// Turns coded rows of a factor space into the numeric columns a model sees. Continuous and integer factors keep
/// their coded value (−1…+1). A categorical factor becomes indicator columns: one per level for distance-based
/// models (Gaussian process, radial basis functions), or one per level after the first for least squares, where
/// the first level is the baseline that the intercept carries.
/// </summary>
public sealed class FactorEncoding
{
    private readonly int[] _firstColumn;

    public FactorEncoding(FactorSpace space, bool dropFirstLevel)
    {
        ArgumentNullException.ThrowIfNull(space);
        Space = space;
        DropsFirstLevel = dropFirstLevel;
        _firstColumn = new int[space.Count];
        var names = new List<string>();
        var factorOf = new List<int>();
        for (var j = 0; j < space.Count; j++)
        {
            var factor = space[j];
            _firstColumn[j] = names.Count;
            if (!factor.IsCategorical)
            {
                names.Add(factor.Name);
                factorOf.Add(j);
                continue;
            }
            for (var level = dropFirstLevel ? 1 : 0; level < factor.Levels.Count; level++)
            {
                names.Add($"{factor.Name}[{factor.Levels[level]}]");
                factorOf.Add(j);
            }
        }
        ColumnNames = names;
        FactorOfColumn = factorOf;
    }

    public FactorSpace Space { get; }

    public bool DropsFirstLevel { get; }

    public int ColumnCount => ColumnNames.Count;

    /// <summary>"fin_height", or "alloy[copper]" for an indicator column.</summary>
    public IReadOnlyList<string> ColumnNames { get; }

    /// <summary>The factor position each column comes from.</summary>
    public IReadOnlyList<int> FactorOfColumn { get; }

    /// <summary>True when the column is an indicator of a categorical level.</summary>
    public bool IsIndicator(int column) => Space[FactorOfColumn[column]].IsCategorical;

    /// <summary>The level index a coded value stands for (nearest level, clamped to the levels that exist).</summary>
    public static int LevelOf(Factor factor, double coded)
    {
        ArgumentNullException.ThrowIfNull(factor);
        var count = factor.Levels.Count;
        var index = Math.Round((coded + 1) / 2 * (count - 1), MidpointRounding.AwayFromZero);
        return double.IsNaN(index) ? 0 : (int)Math.Clamp(index, 0, count - 1);
    }

    /// <summary>Rows <paramref name="start"/>…start+count−1 of <paramref name="coded"/>, encoded into a row-major
    /// block (count × <see cref="ColumnCount"/>).</summary>
    public void Encode(Matrix<double> coded, int start, int count, double[] into)
    {
        ArgumentNullException.ThrowIfNull(coded);
        ArgumentNullException.ThrowIfNull(into);
        if (coded.ColumnCount != Space.Count)
            throw new ArgumentException($"The points have {coded.ColumnCount} columns for {Space.Count} factors.", nameof(coded));
        var m = ColumnCount;
        Array.Clear(into, 0, count * m);
        for (var r = 0; r < count; r++)
        {
            var row = start + r;
            for (var j = 0; j < Space.Count; j++)
            {
                var factor = Space[j];
                var value = coded[row, j];
                if (!factor.IsCategorical)
                {
                    into[r * m + _firstColumn[j]] = value;
                    continue;
                }
                var level = LevelOf(factor, value) - (DropsFirstLevel ? 1 : 0);
                if (level >= 0) into[r * m + _firstColumn[j] + level] = 1;
            }
        }
    }

    /// <summary>All rows encoded (n × <see cref="ColumnCount"/>, row-major).</summary>
    public double[] Encode(Matrix<double> coded)
    {
        ArgumentNullException.ThrowIfNull(coded);
        var into = new double[coded.RowCount * ColumnCount];
        Encode(coded, 0, coded.RowCount, into);
        return into;
    }
}
