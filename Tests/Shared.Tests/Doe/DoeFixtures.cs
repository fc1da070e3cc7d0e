using System.Text.Json;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Doe;

/// <summary>The SciPy reference values in Fixtures/doe, written by make_doe_fixtures.py (Debian's python3-scipy 1.10.1).</summary>
internal static class DoeFixtures
{
    public static JsonElement Load(string name)
    {
        var path = Path.Combine(AppContext.BaseDirectory, "Fixtures", "doe", name);
        using var document = JsonDocument.Parse(File.ReadAllText(path));
        return document.RootElement.Clone();
    }

    public static double[,] Points(JsonElement points)
    {
        var rows = points.GetArrayLength();
        var columns = points[0].GetArrayLength();
        var result = new double[rows, columns];
        for (var i = 0; i < rows; i++)
            for (var j = 0; j < columns; j++) result[i, j] = points[i][j].GetDouble();
        return result;
    }

    /// <summary>k continuous factors x1…xk on 0…1 (coded = 2u − 1).</summary>
    public static FactorSpace Unit(int factors) =>
        FactorSpace.Create([.. Enumerable.Range(1, factors).Select(i => new FactorSpec($"x{i}", Low: 0, High: 1))]).Value!;

    /// <summary>The heat-sink factors of the demo scenario (DESIGN.md §7), plus a base width for constraints.</summary>
    public static FactorSpace HeatSink(bool withBaseWidth = false)
    {
        var specs = new List<FactorSpec>
        {
            new("fin_height", Low: 20, High: 60, Unit: "mm"),
            new("fin_thickness", Low: 0.8, High: 2.5, Unit: "mm"),
            new("fin_count", FactorKind.Integer, 10, 40),
            new("base_thickness", Low: 3, High: 10, Unit: "mm"),
            new("air_velocity", Low: 1, High: 6, Unit: "m/s"),
        };
        if (withBaseWidth) specs.Add(new("base_width", Low: 40, High: 120, Unit: "mm"));
        return FactorSpace.Create(specs).Value!;
    }
}
