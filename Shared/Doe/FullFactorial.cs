// Full factorial design: every combination of the chosen levels of every factor, in standard (Yates) order,
// the first factor changing fastest. Montgomery, Design and Analysis of Experiments, ch. 5–6.
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Doe;

public static class FullFactorial
{
    /// <summary>Default levels: a categorical factor uses all its levels, every other factor two.</summary>
    public static int[] DefaultLevels(FactorSpace space) =>
        [.. space.Factors.Select(f => f.IsCategorical ? f.Levels.Count : 2)];

    /// <summary>Runs a full factorial of these levels needs, without building it (may exceed int).</summary>
    public static double RunCount(IReadOnlyList<int> levels) => levels.Aggregate(1.0, (n, l) => n * l);

    /// <summary>Coded positions of <paramref name="count"/> evenly spaced levels over −1…+1 for one factor.
    /// Integer factors space their levels in natural units and keep them whole; categorical factors use their
    /// level positions.</summary>
    public static double[] LevelPositions(Factor factor, int count)
    {
        ArgumentNullException.ThrowIfNull(factor);
        if (count == 1) return [0];
        var positions = new double[count];
        for (var i = 0; i < count; i++)
        {
            var coded = -1 + 2.0 * i / (count - 1);
            positions[i] = factor.Kind == FactorKind.Integer ? factor.ToCoded(factor.FromCoded(coded)) : coded;
        }
        return positions;
    }

    /// <summary>The full factorial of the given levels per factor. Check the levels with
    /// <see cref="DesignBuilder"/> first; this assumes they are valid.</summary>
    public static DesignMatrix Generate(FactorSpace space, IReadOnlyList<int> levels)
    {
        ArgumentNullException.ThrowIfNull(space);
        ArgumentNullException.ThrowIfNull(levels);
        var k = space.Count;
        var positions = new double[k][];
        for (var j = 0; j < k; j++) positions[j] = LevelPositions(space[j], levels[j]);

        var n = checked((int)RunCount(levels));
        var coded = Matrix<double>.Build.Dense(n, k);
        for (var i = 0; i < n; i++)
        {
            var rest = i;
            for (var j = 0; j < k; j++)
            {
                coded[i, j] = positions[j][rest % levels[j]];
                rest /= levels[j];
            }
        }
        return new DesignMatrix(space, coded);
    }
}
