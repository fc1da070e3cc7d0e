using Runfold.Shared.Studies;

namespace Runfold.Client.Components.Analysis;

/// <summary>
/// The grid of the surface explorer: two factors across a regular grid in natural units (geometric steps on a log
/// scale, whole numbers for an integer factor), the others held at chosen values. The whole grid goes to the
/// server in one prediction request, row by row (y outer, x inner), and comes back as matrices for the chart.
/// </summary>
public sealed record SurfaceGrid(string XFactor, string YFactor, IReadOnlyList<double> XValues, IReadOnlyList<double> YValues,
    IReadOnlyDictionary<string, FactorValue> Held)
{
    /// <summary>Points per axis: 25 × 25 = 625 predictions per surface.</summary>
    public const int Steps = 25;

    public static SurfaceGrid Create(FactorSpec x, FactorSpec y, IReadOnlyDictionary<string, FactorValue> held, int steps = Steps)
    {
        ArgumentNullException.ThrowIfNull(x);
        ArgumentNullException.ThrowIfNull(y);
        return new SurfaceGrid(x.Name, y.Name, Axis(x, steps), Axis(y, steps), held);
    }

    /// <summary>Values along a numeric factor from low to high.</summary>
    public static IReadOnlyList<double> Axis(FactorSpec factor, int steps)
    {
        ArgumentNullException.ThrowIfNull(factor);
        var values = Enumerable.Range(0, steps).Select(i => FactorPosition.Natural(factor, (double)i / (steps - 1)));
        return factor.Kind == FactorKind.Integer ? [.. values.Distinct()] : [.. values];
    }

    public PredictRequest Request()
    {
        var points = new List<IReadOnlyDictionary<string, FactorValue>>(XValues.Count * YValues.Count);
        foreach (var y in YValues)
        {
            foreach (var x in XValues)
            {
                var point = new Dictionary<string, FactorValue>(Held, StringComparer.Ordinal)
                {
                    [XFactor] = FactorValue.Of(x),
                    [YFactor] = FactorValue.Of(y),
                };
                points.Add(point);
            }
        }
        return new PredictRequest(points);
    }

    /// <summary>The predicted mean and sd of one response as rows over y of columns over x (NaN where missing).</summary>
    public (double[][] Mean, double[][] Sd) Read(IReadOnlyList<IReadOnlyDictionary<string, PredictedValueDto>> predictions, string response)
    {
        ArgumentNullException.ThrowIfNull(predictions);
        if (predictions.Count != XValues.Count * YValues.Count)
            throw new ArgumentException($"Expected {XValues.Count * YValues.Count} predictions, got {predictions.Count}.", nameof(predictions));
        var mean = new double[YValues.Count][];
        var sd = new double[YValues.Count][];
        for (var j = 0; j < YValues.Count; j++)
        {
            mean[j] = new double[XValues.Count];
            sd[j] = new double[XValues.Count];
            for (var i = 0; i < XValues.Count; i++)
            {
                var found = predictions[j * XValues.Count + i].TryGetValue(response, out var p);
                mean[j][i] = found ? p!.Mean : double.NaN;
                sd[j][i] = found && p!.Sd is { } s ? s : double.NaN;
            }
        }
        return (mean, sd);
    }
}

/// <summary>A factor's natural value from a position 0…1 along its range and back: linear, geometric on a log
/// scale, whole numbers for an integer factor. Sliders and grids use it.</summary>
public static class FactorPosition
{
    public static double Natural(FactorSpec factor, double position)
    {
        ArgumentNullException.ThrowIfNull(factor);
        double low = factor.Low ?? 0, high = factor.High ?? 1;
        var t = Math.Clamp(position, 0, 1);
        var value = factor.Scale == FactorScale.Log && low > 0 && high > 0
            ? Math.Exp(Math.Log(low) + t * (Math.Log(high) - Math.Log(low)))
            : low + t * (high - low);
        return factor.Kind == FactorKind.Integer ? Math.Round(value, MidpointRounding.AwayFromZero) : value;
    }

    public static double Position(FactorSpec factor, double natural)
    {
        ArgumentNullException.ThrowIfNull(factor);
        double low = factor.Low ?? 0, high = factor.High ?? 1;
        if (high <= low) return 0;
        var t = factor.Scale == FactorScale.Log && low > 0 && high > 0 && natural > 0
            ? (Math.Log(natural) - Math.Log(low)) / (Math.Log(high) - Math.Log(low))
            : (natural - low) / (high - low);
        return Math.Clamp(t, 0, 1);
    }

    /// <summary>The middle of the range (geometric middle on a log scale), or the first level.</summary>
    public static FactorValue Centre(FactorSpec factor)
    {
        ArgumentNullException.ThrowIfNull(factor);
        return factor.Kind == FactorKind.Categorical
            ? FactorValue.OfLevel(factor.Levels is { Count: > 0 } levels ? levels[0] : "")
            : FactorValue.Of(Natural(factor, 0.5));
    }
}
