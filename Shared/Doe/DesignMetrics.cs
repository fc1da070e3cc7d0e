// Design-quality metrics: minimum pairwise distance (Johnson, Moore & Ylvisaker 1990), centered L2 discrepancy
// (Hickernell 1998, Math. Comp. 67, 299–322), column correlations, D-efficiency and the condition number of X'X.
using System.Globalization;
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Doe;

public static class DesignMetrics
{
    public static DesignMetricsSummary Evaluate(DesignMatrix design, DesignModelKind model)
    {
        ArgumentNullException.ThrowIfNull(design);
        var coded = design.Coded;
        var levels = new Dictionary<string, int>(StringComparer.Ordinal);
        for (var j = 0; j < design.Space.Count; j++)
        {
            var distinct = new HashSet<double>();
            for (var i = 0; i < design.RunCount; i++) distinct.Add(Math.Round(design.Space[j].FromCoded(coded[i, j]), 9));
            levels[design.Space[j].Name] = distinct.Count;
        }
        var terms = new DesignModel(design.Space, model);
        var (efficiency, condition) = Information(terms.ModelMatrix(coded));
        return new DesignMetricsSummary(
            design.RunCount,
            levels,
            MinDistance(coded),
            CenteredL2Discrepancy(UnitCube.FromCoded(coded)),
            MaxAbsCorrelation(coded),
            model,
            terms.TermCount,
            efficiency,
            condition);
    }

    /// <summary>The smallest Euclidean distance between two runs (0 with fewer than two runs).</summary>
    public static double MinDistance(Matrix<double> coded)
    {
        ArgumentNullException.ThrowIfNull(coded);
        return MinDistance(ToRows(coded));
    }

    /// <summary>The same for points given as rows of an array (for example a design in the unit cube).</summary>
    public static double MinDistance(double[,] points)
    {
        ArgumentNullException.ThrowIfNull(points);
        var rows = new double[points.GetLength(0)][];
        for (var i = 0; i < rows.Length; i++)
        {
            rows[i] = new double[points.GetLength(1)];
            for (var j = 0; j < rows[i].Length; j++) rows[i][j] = points[i, j];
        }
        return MinDistance(rows);
    }

    private static double MinDistance(double[][] rows)
    {
        var best = double.PositiveInfinity;
        for (var a = 0; a < rows.Length; a++)
            for (var b = a + 1; b < rows.Length; b++)
                best = Math.Min(best, SquaredDistance(rows[a], rows[b]));
        return double.IsPositiveInfinity(best) ? 0 : Math.Sqrt(best);
    }

    /// <summary>The squared centered L2 discrepancy of points in [0, 1]^d (Hickernell 1998, eq. 5.1b), as
    /// scipy.stats.qmc.discrepancy(sample, method="CD") computes it.</summary>
    public static double CenteredL2Discrepancy(double[,] unit)
    {
        ArgumentNullException.ThrowIfNull(unit);
        var n = unit.GetLength(0);
        var d = unit.GetLength(1);
        if (n == 0) return 0;
        var centred = new double[n, d];
        for (var i = 0; i < n; i++)
            for (var k = 0; k < d; k++) centred[i, k] = Math.Abs(unit[i, k] - 0.5);
        double single = 0;
        for (var i = 0; i < n; i++)
        {
            double product = 1;
            for (var k = 0; k < d; k++) product *= 1 + 0.5 * centred[i, k] - 0.5 * centred[i, k] * centred[i, k];
            single += product;
        }
        double pairs = 0;
        for (var i = 0; i < n; i++)
            for (var j = 0; j < n; j++)
            {
                double product = 1;
                for (var k = 0; k < d; k++)
                    product *= 1 + 0.5 * centred[i, k] + 0.5 * centred[j, k] - 0.5 * Math.Abs(unit[i, k] - unit[j, k]);
                pairs += product;
            }
        return Math.Pow(13.0 / 12.0, d) - 2.0 / n * single + pairs / ((double)n * n);
    }

    /// <summary>The largest |Pearson correlation| between two factor columns; constant columns are skipped.</summary>
    public static double MaxAbsCorrelation(Matrix<double> coded)
    {
        ArgumentNullException.ThrowIfNull(coded);
        var n = coded.RowCount;
        if (n < 2) return 0;
        var centred = new double[coded.ColumnCount][];
        var norms = new double[coded.ColumnCount];
        for (var j = 0; j < coded.ColumnCount; j++)
        {
            var column = coded.Column(j).ToArray();
            var mean = column.Average();
            for (var i = 0; i < n; i++) column[i] -= mean;
            centred[j] = column;
            norms[j] = Math.Sqrt(column.Sum(v => v * v));
        }
        double worst = 0;
        for (var a = 0; a < centred.Length; a++)
            for (var b = a + 1; b < centred.Length; b++)
            {
                if (norms[a] < 1e-12 || norms[b] < 1e-12) continue;
                double dot = 0;
                for (var i = 0; i < n; i++) dot += centred[a][i] * centred[b][i];
                worst = Math.Max(worst, Math.Abs(dot / (norms[a] * norms[b])));
            }
        return Math.Min(worst, 1);
    }

    /// <summary>D-efficiency |X'X / N|^(1/p) and the condition number of X'X; both null when X'X is singular
    /// (fewer runs than terms, or aliased terms).</summary>
    public static (double? DEfficiency, double? ConditionNumber) Information(Matrix<double> modelMatrix)
    {
        ArgumentNullException.ThrowIfNull(modelMatrix);
        var n = modelMatrix.RowCount;
        var p = modelMatrix.ColumnCount;
        if (n < p || p == 0) return (null, null);
        var information = modelMatrix.TransposeThisAndMultiply(modelMatrix);
        var eigenvalues = information.Evd(Symmetricity.Symmetric).EigenValues.Select(e => e.Real).ToArray();
        var largest = eigenvalues.Max();
        var smallest = eigenvalues.Min();
        if (largest <= 0 || smallest <= largest * 1e-10) return (null, null);
        var logDeterminant = eigenvalues.Sum(e => Math.Log(e / n));
        return (Math.Exp(logDeterminant / p), largest / smallest);
    }

    /// <summary>A sentence for the design notes, e.g. "D-efficiency 0.874 for the quadratic model (10 terms)".</summary>
    public static string Describe(DesignMetricsSummary metrics)
    {
        ArgumentNullException.ThrowIfNull(metrics);
        var model = metrics.Model.ToString().ToLowerInvariant();
        return metrics.DEfficiency is { } d
            ? string.Create(CultureInfo.InvariantCulture, $"D-efficiency {d:0.###} for the {model} model ({metrics.ModelTerms} terms).")
            : $"The {model} model ({metrics.ModelTerms} terms) cannot be estimated from these runs.";
    }

    internal static double[][] ToRows(Matrix<double> coded)
    {
        var rows = new double[coded.RowCount][];
        for (var i = 0; i < rows.Length; i++) rows[i] = coded.Row(i).ToArray();
        return rows;
    }

    internal static double SquaredDistance(ReadOnlySpan<double> a, ReadOnlySpan<double> b)
    {
        double sum = 0;
        for (var k = 0; k < a.Length; k++)
        {
            var diff = a[k] - b[k];
            sum += diff * diff;
        }
        return sum;
    }
}
