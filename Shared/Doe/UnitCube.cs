using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Doe;

/// <summary>
/// From points in the unit cube (Latin hypercube, Sobol') to coded factor values, so that every value of a factor
/// is equally likely: continuous factors linearly (in log10 for a log-scale factor, through the coding), integer
/// factors onto their whole values in equal slices, categorical factors onto their levels in equal slices.
/// </summary>
internal static class UnitCube
{
    public static double ToCoded(Factor factor, double u)
    {
        switch (factor.Kind)
        {
            case FactorKind.Integer:
                var values = (int)(factor.High - factor.Low) + 1;
                return factor.ToCoded(factor.Low + Math.Min((int)(u * values), values - 1));
            case FactorKind.Categorical:
                var levels = factor.Levels.Count;
                return factor.ToCoded(Math.Min((int)(u * levels), levels - 1));
            default:
                return 2 * u - 1;
        }
    }

    public static Matrix<double> ToCoded(FactorSpace space, double[,] unit)
    {
        var coded = Matrix<double>.Build.Dense(unit.GetLength(0), space.Count);
        for (var i = 0; i < unit.GetLength(0); i++)
            for (var j = 0; j < space.Count; j++) coded[i, j] = ToCoded(space[j], unit[i, j]);
        return coded;
    }

    /// <summary>Coded values → unit cube over the design's own extent: −a…+a maps to 0…1 with a = max(1, the
    /// largest |coded| value), so a circumscribed composite design is measured inside its own box.</summary>
    public static double[,] FromCoded(Matrix<double> coded)
    {
        var extent = Math.Max(1, coded.Enumerate().Select(Math.Abs).DefaultIfEmpty(0).Max());
        var unit = new double[coded.RowCount, coded.ColumnCount];
        for (var i = 0; i < coded.RowCount; i++)
            for (var j = 0; j < coded.ColumnCount; j++) unit[i, j] = Math.Clamp((coded[i, j] / extent + 1) / 2, 0, 1);
        return unit;
    }
}
