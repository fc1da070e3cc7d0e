// Main-effect curves E[y | xᵢ] and two-factor surfaces E[y | xᵢ, xⱼ] of a surrogate, averaged over the other factors
// by Monte Carlo on a scrambled Sobol' sample (the "main effects" of Saltelli et al., Global Sensitivity Analysis:
// The Primer, 2008, §1.2.9; the conditional expectations whose variance gives the first-order indices).
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Doe;
using Runfold.Shared.Modeling;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Sensitivity;

/// <summary>Grid and sample sizes of the curves and surfaces.</summary>
public sealed record MainEffectOptions
{
    /// <summary>Grid values of a continuous factor (and the most of an integer factor, which otherwise takes every
    /// whole value); a categorical factor takes each level.</summary>
    public int GridPoints { get; init; } = 21;

    /// <summary>Points of the other factors each grid value is averaged over.</summary>
    public int Samples { get; init; } = 512;

    public int Seed { get; init; } = 1;

    public static MainEffectOptions Default { get; } = new();

    internal void Check()
    {
        if (GridPoints < 2) throw new ArgumentException("A curve needs at least two grid points.", nameof(GridPoints));
        if (Samples < 2) throw new ArgumentException("At least two samples are needed.", nameof(Samples));
    }
}

/// <summary>E[y | factor] on a grid: natural values (level index for a categorical factor), coded values, the mean and
/// the spread (standard deviation of y over the other factors at that value).</summary>
public sealed record MainEffectCurve(
    int Factor,
    string Name,
    IReadOnlyList<double> Natural,
    IReadOnlyList<double> Coded,
    IReadOnlyList<double> Mean,
    IReadOnlyList<double> Spread);

/// <summary>E[y | a, b] on a grid: Mean[i][j] at NaturalA[i], NaturalB[j].</summary>
public sealed record InteractionSurface(
    int FactorA,
    int FactorB,
    string NameA,
    string NameB,
    IReadOnlyList<double> NaturalA,
    IReadOnlyList<double> NaturalB,
    IReadOnlyList<IReadOnlyList<double>> Mean);

public static class MainEffects
{
    /// <summary>One curve per factor, in factor order.</summary>
    public static IReadOnlyList<MainEffectCurve> Curves(IResponseSurrogate surrogate, MainEffectOptions? options = null,
        CancellationToken cancellation = default)
    {
        ArgumentNullException.ThrowIfNull(surrogate);
        options ??= MainEffectOptions.Default;
        options.Check();
        var space = surrogate.Space;
        var sample = Sample(space, options.Samples, options.Seed);
        var curves = new List<MainEffectCurve>(space.Count);
        for (var j = 0; j < space.Count; j++)
        {
            cancellation.ThrowIfCancellationRequested();
            var grid = Grid(space[j], options.GridPoints);
            var mean = new double[grid.Length];
            var spread = new double[grid.Length];
            var values = surrogate.PredictMean(Substitute(sample, [j], [.. grid.Select(g => new[] { g })]));
            var m = sample.RowCount;
            for (var g = 0; g < grid.Length; g++)
            {
                var slice = values.AsSpan(g * m, m);
                var average = 0.0;
                foreach (var v in slice) average += v;
                average /= m;
                var squares = 0.0;
                foreach (var v in slice) squares += (v - average) * (v - average);
                mean[g] = average;
                spread[g] = Math.Sqrt(squares / m);
            }
            curves.Add(new MainEffectCurve(j, space[j].Name, [.. grid.Select(space[j].FromCoded)], grid, mean, spread));
        }
        return curves;
    }

    /// <summary>The surface of factors <paramref name="a"/> and <paramref name="b"/> (positions in factor order).</summary>
    public static InteractionSurface Surface(IResponseSurrogate surrogate, int a, int b, MainEffectOptions? options = null,
        CancellationToken cancellation = default)
    {
        ArgumentNullException.ThrowIfNull(surrogate);
        options ??= MainEffectOptions.Default with { GridPoints = 15, Samples = 256 };
        options.Check();
        var space = surrogate.Space;
        if (a < 0 || a >= space.Count || b < 0 || b >= space.Count || a == b)
            throw new ArgumentException($"Pick two different factors among the {space.Count}.", nameof(b));
        var sample = Sample(space, options.Samples, options.Seed);
        var gridA = Grid(space[a], options.GridPoints);
        var gridB = Grid(space[b], options.GridPoints);
        var m = sample.RowCount;
        var rows = new List<IReadOnlyList<double>>(gridA.Length);
        foreach (var valueA in gridA)
        {
            cancellation.ThrowIfCancellationRequested();
            var values = surrogate.PredictMean(Substitute(sample, [a, b], [.. gridB.Select(valueB => new[] { valueA, valueB })]));
            var row = new double[gridB.Length];
            for (var g = 0; g < gridB.Length; g++)
            {
                var sum = 0.0;
                for (var r = 0; r < m; r++) sum += values[g * m + r];
                row[g] = sum / m;
            }
            rows.Add(row);
        }
        return new InteractionSurface(a, b, space[a].Name, space[b].Name,
            [.. gridA.Select(space[a].FromCoded)], [.. gridB.Select(space[b].FromCoded)], rows);
    }

    /// <summary>Coded grid values of a factor: evenly spaced for a continuous factor, every whole value of an integer
    /// factor (or evenly spaced whole values when there are more than <paramref name="points"/>), each level of a
    /// categorical factor.</summary>
    internal static double[] Grid(Factor factor, int points)
    {
        switch (factor.Kind)
        {
            case FactorKind.Categorical:
                return [.. Enumerable.Range(0, factor.Levels.Count).Select(i => factor.ToCoded(i))];
            case FactorKind.Integer:
                var count = (long)(factor.High - factor.Low) + 1;
                if (count <= points) return [.. Enumerable.Range(0, (int)count).Select(i => factor.ToCoded(factor.Low + i))];
                return [.. Enumerable.Range(0, points)
                    .Select(i => Math.Round(factor.Low + (factor.High - factor.Low) * i / (points - 1), MidpointRounding.AwayFromZero))
                    .Distinct().Select(factor.ToCoded)];
            default:
                return [.. Enumerable.Range(0, points).Select(i => -1 + 2.0 * i / (points - 1))];
        }
    }

    /// <summary>A scrambled Sobol' sample of the factor box in coded units.</summary>
    internal static Matrix<double> Sample(FactorSpace space, int count, int seed) =>
        UnitCube.ToCoded(space, SobolSequence.Generate(count, space.Count, scramble: true, seed: seed));

    /// <summary>The sample repeated once per setting, with the given columns set to each setting in turn.</summary>
    private static Matrix<double> Substitute(Matrix<double> sample, int[] columns, double[][] settings)
    {
        var m = sample.RowCount;
        var k = sample.ColumnCount;
        var total = m * settings.Length;
        var storage = new double[total * k];
        for (var j = 0; j < k; j++)
        {
            var position = Array.IndexOf(columns, j);
            for (var s = 0; s < settings.Length; s++)
                for (var r = 0; r < m; r++)
                    storage[j * total + s * m + r] = position >= 0 ? settings[s][position] : sample[r, j];
        }
        return Matrix<double>.Build.Dense(total, k, storage);
    }
}
