using Plotly.Blazor;
using Plotly.Blazor.Traces;
using Runfold.Shared.Studies;
using PlotLayout = Plotly.Blazor.Layout;

namespace Runfold.Client.Components.Analysis;

/// <summary>The sensitivity ranking: Sobol' total-effect indices as bars with their bootstrap intervals and the
/// first-order indices beside them; and the ranking across responses.</summary>
public static class SensitivityPlots
{
    /// <summary>Horizontal bars, the factor with the largest total effect on top; each factor's name carries the
    /// direction of its effect.</summary>
    public static (IList<ITrace> Data, PlotLayout Layout) Bars(IReadOnlyList<FactorSensitivityDto> ranking, string response)
    {
        ArgumentNullException.ThrowIfNull(ranking);
        var rows = ranking.OrderBy(s => s.Total).ToList();
        var names = ChartStyle.Values(rows.Select(s => $"{s.Factor} {AnalysisText.DirectionMark(s.Direction)}"));
        var layout = ChartStyle.NewLayout(Math.Max(200, 64 + 46 * rows.Count), left: 150, top: 30);
        layout.BarMode = Plotly.Blazor.LayoutLib.BarModeEnum.Group;
        layout.BarGap = 0.15m;
        layout.ShowLegend = true;
        layout.Legend = [ChartStyle.TopLegend()];
        var axis = ChartStyle.XAxis($"share of the variance of {response}");
        axis.RangeMode = Plotly.Blazor.LayoutLib.XAxisLib.RangeModeEnum.ToZero;
        layout.XAxis = [axis];
        layout.YAxis = [ChartStyle.YAxis("")];
        return (
        [
            IndexBars("first-order", names, rows.Select(s => (s.FirstOrder, s.FirstOrderLow, s.FirstOrderHigh)), ChartStyle.Teal, ChartStyle.Muted),
            IndexBars("total effect", names, rows.Select(s => (s.Total, s.TotalLow, s.TotalHigh)), ChartStyle.Ink, ChartStyle.Amber),
        ], layout);
    }

    /// <summary>Factors ranked across responses by the weighted mean of their total-effect indices (weights of
    /// the responses, 1 when unset; responses without a ranking are left out).</summary>
    public static IReadOnlyList<(string Factor, double Weighted)> AcrossResponses(AnalysisSnapshotDto snapshot, IReadOnlyList<ResponseSpec> responses)
    {
        ArgumentNullException.ThrowIfNull(snapshot);
        ArgumentNullException.ThrowIfNull(responses);
        var ranked = snapshot.Responses.Where(r => r.Sensitivity.Count > 0).ToList();
        var weights = ranked.ToDictionary(r => r.Name, r => responses.FirstOrDefault(s => s.Name == r.Name)?.Weight ?? 1, StringComparer.Ordinal);
        var total = weights.Values.Sum();
        if (ranked.Count == 0 || total <= 0) return [];
        return [.. ranked.SelectMany(r => r.Sensitivity.Select(s => (s.Factor, Share: weights[r.Name] * s.Total / total)))
            .GroupBy(x => x.Factor, StringComparer.Ordinal)
            .Select(g => (g.Key, g.Sum(x => x.Share)))
            .OrderByDescending(x => x.Item2)];
    }

    /// <summary>Horizontal bars of one kind of index, with their intervals as error bars.</summary>
    private static Bar IndexBars(string name, IList<object> factors, IEnumerable<(double Value, double Low, double High)> indices, string colour, string intervalColour)
    {
        var rows = indices.ToList();
        return new Bar
        {
            Name = name,
            Orientation = Plotly.Blazor.Traces.BarLib.OrientationEnum.H,
            Y = factors,
            X = ChartStyle.Values(rows.Select(r => r.Value)),
            ErrorX = new Plotly.Blazor.Traces.BarLib.ErrorX
            {
                Type = Plotly.Blazor.Traces.BarLib.ErrorXLib.TypeEnum.Data,
                Symmetric = false,
                Array = ChartStyle.Values(rows.Select(r => Math.Max(0, r.High - r.Value))),
                ArrayMinus = ChartStyle.Values(rows.Select(r => Math.Max(0, r.Value - r.Low))),
                Color = intervalColour,
                Thickness = 1.5m,
                Width = 4,
            },
            Marker = new Plotly.Blazor.Traces.BarLib.Marker { Color = colour },
            HoverTemplate = $"%{{y}}: {name} %{{x:.2f}}<extra></extra>",
        };
    }
}
