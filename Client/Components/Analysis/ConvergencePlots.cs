using Plotly.Blazor;
using Plotly.Blazor.Traces;
using Plotly.Blazor.Traces.ScatterLib;
using Runfold.Shared.Studies;
using PlotLayout = Plotly.Blazor.Layout;

namespace Runfold.Client.Components.Analysis;

/// <summary>How the analysis settled as runs came in: the best candidate's desirability and each response's
/// cross-validated NRMSE against the number of done runs.</summary>
public static class ConvergencePlots
{
    public static (IList<ITrace> Data, PlotLayout Layout) Desirability(IReadOnlyList<AnalysisHistoryPointDto> history)
    {
        ArgumentNullException.ThrowIfNull(history);
        var points = history.Where(h => h.BestDesirability is not null).ToList();
        var layout = ChartStyle.NewLayout(300);
        layout.XAxis = [ChartStyle.XAxis("done runs in the analysis")];
        var y = ChartStyle.YAxis("best candidate's desirability");
        y.Range = [0, 1.02];
        layout.YAxis = [y];
        return (
        [
            new Scatter
            {
                Name = "best desirability",
                Mode = ModeFlag.Lines | ModeFlag.Markers,
                X = ChartStyle.Values(points.Select(p => (double)p.BasedOnRuns)),
                Y = ChartStyle.Values(points.Select(p => p.BestDesirability!.Value)),
                TextArray = [.. points.Select(p => $"analysis {p.Version}")],
                HoverTemplate = "%{text}: %{y:.3f} with %{x} runs<extra></extra>",
                Line = new Line { Color = ChartStyle.Ink, Width = 2.5m },
                Marker = new Marker { Color = ChartStyle.Ink, Size = 6 },
            },
        ], layout);
    }

    public static (IList<ITrace> Data, PlotLayout Layout) Nrmse(IReadOnlyList<AnalysisHistoryPointDto> history, IReadOnlyList<ResponseSpec> responses)
    {
        ArgumentNullException.ThrowIfNull(history);
        ArgumentNullException.ThrowIfNull(responses);
        var layout = ChartStyle.NewLayout(300, top: 30);
        layout.ShowLegend = true;
        layout.Legend = [ChartStyle.TopLegend()];
        layout.XAxis = [ChartStyle.XAxis("done runs in the analysis")];
        var y = ChartStyle.YAxis("cross-validated NRMSE [%]");
        y.RangeMode = Plotly.Blazor.LayoutLib.YAxisLib.RangeModeEnum.ToZero;
        layout.YAxis = [y];
        var data = new List<ITrace>();
        for (var i = 0; i < responses.Count; i++)
        {
            var name = responses[i].Name;
            var points = history.Where(h => h.Nrmse.ContainsKey(name)).ToList();
            if (points.Count == 0) continue;
            var colour = ChartStyle.Series[i % ChartStyle.Series.Count];
            data.Add(new Scatter
            {
                Name = name,
                Mode = ModeFlag.Lines | ModeFlag.Markers,
                X = ChartStyle.Values(points.Select(p => (double)p.BasedOnRuns)),
                Y = ChartStyle.Values(points.Select(p => 100 * p.Nrmse[name])),
                HoverTemplate = $"{name}: %{{y:.2f}} % with %{{x}} runs<extra></extra>",
                Line = new Line { Color = colour, Width = 2 },
                Marker = new Marker { Color = colour, Size = 5 },
            });
        }
        return (data, layout);
    }

    /// <summary>A sentence on the latest change: how far the best desirability moved between the last two analyses.</summary>
    public static string? Trend(IReadOnlyList<AnalysisHistoryPointDto> history)
    {
        ArgumentNullException.ThrowIfNull(history);
        var points = history.Where(h => h.BestDesirability is not null).ToList();
        if (points.Count < 2) return null;
        var (before, last) = (points[^2], points[^1]);
        var change = last.BestDesirability!.Value - before.BestDesirability!.Value;
        var added = last.BasedOnRuns - before.BasedOnRuns;
        var runs = added == 1 ? "1 more run" : $"{added} more runs";
        return Math.Abs(change) < 0.005
            ? $"With {runs}, the best desirability stayed at {Formats.Number(last.BestDesirability.Value)}."
            : $"With {runs}, the best desirability moved from {Formats.Number(before.BestDesirability.Value)} to {Formats.Number(last.BestDesirability.Value)}.";
    }
}
