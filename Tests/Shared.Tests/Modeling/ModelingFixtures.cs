using System.Text.Json;
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;
using Runfold.TestFunctions;

namespace Runfold.Shared.Tests.Modeling;

/// <summary>
/// The committed fixtures of Fixtures/modeling, made by make_modeling_fixtures.py with Debian's python3
/// (scipy.stats.qmc designs, scikit-learn's GaussianProcessRegressor).
/// </summary>
internal static class ModelingFixtures
{
    private static readonly JsonSerializerOptions Json = new() { PropertyNameCaseInsensitive = true };
    private static readonly Lazy<DesignFile> LazyDesigns = new(() => Load<DesignFile>("designs.json"));

    public static T Load<T>(string file)
    {
        var path = Path.Combine(AppContext.BaseDirectory, "Fixtures", "modeling", file);
        return JsonSerializer.Deserialize<T>(File.ReadAllText(path), Json)!;
    }

    public static DesignFile Designs => LazyDesigns.Value;

    public static TestFunction Function(string name) => name switch
    {
        "Branin" => PublishedTestFunctions.Branin,
        "Hartmann-6" => PublishedTestFunctions.Hartmann6,
        "Borehole" => PublishedTestFunctions.Borehole,
        _ => throw new ArgumentOutOfRangeException(nameof(name), name, null),
    };

    /// <summary>A factor space of d continuous factors x1…xd on −1…+1, so coded = natural.</summary>
    public static FactorSpace UnitSpace(int dimension) => FactorSpace.Create(
        [.. Enumerable.Range(1, dimension).Select(i => new FactorSpec($"x{i}", Low: -1, High: 1))]).Value!;

    /// <summary>Unit-cube points [0, 1]^d → coded −1…+1.</summary>
    public static Matrix<double> Coded(double[][] unit) =>
        Matrix<double>.Build.Dense(unit.Length, unit[0].Length, (i, j) => 2 * unit[i][j] - 1);

    public static Matrix<double> Matrix(double[][] rows) =>
        Matrix<double>.Build.Dense(rows.Length, rows[0].Length, (i, j) => rows[i][j]);

    /// <summary>The published function at unit-cube points.</summary>
    public static double[] Evaluate(TestFunction function, double[][] unit) =>
        [.. unit.Select(u => function.Evaluate(function.FromUnit(u)))];
}

internal sealed record DesignFile(DesignFixture[] Designs, Dictionary<string, double[][]> Holdout)
{
    public DesignFixture Design(string function, int runs) => Designs.Single(d => d.Function == function && d.Runs == runs);
}

internal sealed record DesignFixture(string Function, int Runs, int Seed, double[][] Points, double[] Values);
