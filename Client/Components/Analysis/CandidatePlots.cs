using System.Globalization;
using Plotly.Blazor;
using Plotly.Blazor.LayoutLib;
using Plotly.Blazor.Traces;
using Plotly.Blazor.Traces.ScatterLib;
using Runfold.Shared.Studies;
using PlotLayout = Plotly.Blazor.Layout;

namespace Runfold.Client.Components.Analysis;

/// <summary>The candidates page's charts: the Pareto scatter of any two responses and the parallel coordinates of
/// factors and predictions. Parallel coordinates are drawn as ordinary lines over normalised axes, which keeps
/// them in SVG (Plotly's own parallel-coordinates trace needs WebGL code generation that the content security
/// policy does not allow).</summary>
public static class CandidatePlots
{
    /// <summary>Predicted means with ± sd bars; the Pareto front of the pair as a line; the selected candidate
    /// ringed; for verification runs, the observed point joined to its prediction; hard limits as dashed lines.</summary>
    public static (IList<ITrace> Data, PlotLayout Layout) Pareto(IReadOnlyList<CandidateDto> candidates, ResponseSpec first, ResponseSpec second, int? selectedRank)
    {
        ArgumentNullException.ThrowIfNull(candidates);
        ArgumentNullException.ThrowIfNull(first);
        ArgumentNullException.ThrowIfNull(second);
        var shown = candidates.Where(c => c.Predicted.ContainsKey(first.Name) && c.Predicted.ContainsKey(second.Name)).OrderBy(c => c.Rank).ToList();
        PredictedValueDto P(CandidateDto c, ResponseSpec r) => c.Predicted[r.Name];
        var front = ParetoFront.Indices([.. shown.Select(c => (ParetoFront.Cost(first, P(c, first).Mean), ParetoFront.Cost(second, P(c, second).Mean)))])
            .Select(i => shown[i]).ToList();
        var onFront = front.Select(c => c.Rank).ToHashSet();

        var layout = ChartStyle.NewLayout(400, top: 30);
        layout.ShowLegend = true;
        layout.Legend = [ChartStyle.TopLegend()];
        layout.XAxis = [ChartStyle.XAxis($"{AnalysisText.Label(first.Name, first.Unit)} · {AnalysisText.GoalWord(first.Goal)}")];
        layout.YAxis = [ChartStyle.YAxis($"{AnalysisText.Label(second.Name, second.Unit)} · {AnalysisText.GoalWord(second.Goal)}")];
        layout.Shapes = [.. LimitLines(first, "x"), .. LimitLines(second, "y")];

        var data = new List<ITrace>
        {
            new Scatter
            {
                Name = "Pareto front of this pair",
                Mode = ModeFlag.Lines,
                X = ChartStyle.Values(front.Select(c => P(c, first).Mean)),
                Y = ChartStyle.Values(front.Select(c => P(c, second).Mean)),
                Line = new Line { Color = ChartStyle.Amber, Width = 2, Shape = Plotly.Blazor.Traces.ScatterLib.LineLib.ShapeEnum.Hv },
                HoverInfo = HoverInfoFlag.Skip,
            },
            Points("candidates", shown.Where(c => !onFront.Contains(c.Rank)).ToList(), first, second, ChartStyle.Faint),
            Points("on the front", [.. front], first, second, ChartStyle.Ink),
        };

        var verified = shown.Where(c => c.Verification?.Responses is { Count: > 0 } v && v.Any(x => x.Response == first.Name) && v.Any(x => x.Response == second.Name)).ToList();
        if (verified.Count > 0)
        {
            double Observed(CandidateDto c, ResponseSpec r) => c.Verification!.Responses!.First(v => v.Response == r.Name).Observed;
            data.Add(new Scatter
            {
                Name = "verification: predicted → observed",
                Mode = ModeFlag.Lines,
                X = ChartStyle.Values(verified.SelectMany(c => new[] { P(c, first).Mean, Observed(c, first), double.NaN })),
                Y = ChartStyle.Values(verified.SelectMany(c => new[] { P(c, second).Mean, Observed(c, second), double.NaN })),
                Line = new Line { Color = ChartStyle.Teal, Width = 1.5m, Dash = "dot" },
                HoverInfo = HoverInfoFlag.Skip,
                ShowLegend = false,
            });
            data.Add(new Scatter
            {
                Name = "observed in a verification run",
                Mode = ModeFlag.Markers,
                X = ChartStyle.Values(verified.Select(c => Observed(c, first))),
                Y = ChartStyle.Values(verified.Select(c => Observed(c, second))),
                TextArray = [.. verified.Select(c => $"Candidate {c.Rank}, run {c.Verification!.RunNumber}")],
                HoverTemplate = "%{text}<br>observed %{x}, %{y}<extra></extra>",
                Marker = new Marker { Color = ChartStyle.Teal, Size = 11, Symbol = Plotly.Blazor.Traces.ScatterLib.MarkerLib.SymbolEnum.Diamond },
            });
        }
        if (shown.FirstOrDefault(c => c.Rank == selectedRank) is { } picked)
        {
            data.Add(new Scatter
            {
                Name = $"candidate {picked.Rank}",
                Mode = ModeFlag.Markers,
                X = ChartStyle.Values([P(picked, first).Mean]),
                Y = ChartStyle.Values([P(picked, second).Mean]),
                Marker = new Marker { Color = "rgba(0,0,0,0)", Size = 20, Line = new Plotly.Blazor.Traces.ScatterLib.MarkerLib.Line { Color = ChartStyle.Brick, Width = 2.5m } },
                HoverInfo = HoverInfoFlag.Skip,
            });
        }
        return (data, layout);
    }

    /// <summary>One line per candidate across the factors, the predicted responses and the desirability, each axis
    /// scaled to 0…1 (factors over their ranges, responses over the candidates' span). Lines darken with
    /// desirability; the selected candidate is drawn thick in brick.</summary>
    public static (IList<ITrace> Data, PlotLayout Layout) ParallelCoordinates(IReadOnlyList<CandidateDto> candidates,
        IReadOnlyList<FactorSpec> factors, IReadOnlyList<ResponseSpec> responses, int? selectedRank)
    {
        ArgumentNullException.ThrowIfNull(candidates);
        ArgumentNullException.ThrowIfNull(factors);
        ArgumentNullException.ThrowIfNull(responses);
        var axes = new List<(string Title, Func<CandidateDto, double> Value, double Lo, double Hi, Func<double, string> Text)>();
        foreach (var f in factors)
        {
            if (f.Kind == FactorKind.Categorical)
            {
                var levels = f.Levels ?? [];
                axes.Add((f.Name, c => c.Factors.TryGetValue(f.Name, out var v) && v.Level is { } l ? Math.Max(0, IndexOf(levels, l)) : double.NaN,
                    0, Math.Max(1, levels.Count - 1), i => (int)i < levels.Count ? levels[(int)i] : ""));
            }
            else
            {
                axes.Add((AnalysisText.Label(f.Name, f.Unit), c => c.Factors.TryGetValue(f.Name, out var v) ? v.Number : double.NaN,
                    f.Low ?? 0, f.High ?? 1, Formats.Number));
            }
        }
        foreach (var r in responses)
        {
            var values = candidates.Select(c => c.Predicted.TryGetValue(r.Name, out var p) ? p.Mean : double.NaN).Where(double.IsFinite).ToList();
            var (lo, hi) = values.Count == 0 ? (0.0, 1.0) : (values.Min(), values.Max());
            axes.Add((AnalysisText.Label(r.Name, r.Unit), c => c.Predicted.TryGetValue(r.Name, out var p) ? p.Mean : double.NaN, lo, hi, Formats.Number));
        }
        axes.Add(("desirability", c => c.Desirability, 0, 1, Formats.Number));

        double Scaled(int axis, CandidateDto c)
        {
            var (_, value, lo, hi, _) = axes[axis];
            var v = value(c);
            return hi > lo ? (v - lo) / (hi - lo) : 0.5;
        }

        var xs = ChartStyle.Values(Enumerable.Range(0, axes.Count).Select(i => (double)i));
        var data = new List<ITrace>();
        foreach (var c in candidates.OrderBy(c => c.Rank == selectedRank).ThenByDescending(c => c.Rank))
        {
            var picked = c.Rank == selectedRank;
            data.Add(new Scatter
            {
                Name = $"candidate {c.Rank}",
                Mode = ModeFlag.Lines | ModeFlag.Markers,
                X = xs,
                Y = ChartStyle.Values(Enumerable.Range(0, axes.Count).Select(i => Scaled(i, c))),
                TextArray = [.. axes.Select(a => $"{a.Title}: {a.Text(a.Value(c))}")],
                HoverTemplate = $"Candidate {c.Rank}<br>%{{text}}<extra></extra>",
                Line = new Line { Color = picked ? ChartStyle.Brick : Shade(c.Desirability), Width = picked ? 4 : 1.5m },
                Marker = new Marker { Size = picked ? 7 : 4, Color = picked ? ChartStyle.Brick : Shade(c.Desirability) },
            });
        }

        var layout = ChartStyle.NewLayout(400, left: 24, right: 24, top: 30, bottom: 86);
        layout.HoverMode = HoverModeEnum.Closest;
        var x = ChartStyle.XAxis("");
        x.TickMode = Plotly.Blazor.LayoutLib.XAxisLib.TickModeEnum.Array;
        x.TickVals = xs;
        // Axis names break after underscores and before the unit, so neighbouring labels do not run together.
        x.TickText = [.. axes.Select(a => (object)a.Title.Replace("_", "_<br>", StringComparison.Ordinal).Replace(" [", "<br>[", StringComparison.Ordinal))];
        x.ShowGrid = false;
        x.TickAngle = 0;
        x.ZeroLine = false;
        x.Range = [-0.3, axes.Count - 0.7];
        layout.XAxis = [x];
        layout.YAxis = [new YAxis { Visible = false, Range = [-0.08, 1.08], FixedRange = true }];
        layout.Shapes = [.. Enumerable.Range(0, axes.Count).Select(i => new Shape
        {
            Type = Plotly.Blazor.LayoutLib.ShapeLib.TypeEnum.Line, XRef = "x", YRef = "y", X0 = i, X1 = i, Y0 = 0, Y1 = 1,
            Line = new Plotly.Blazor.LayoutLib.ShapeLib.Line { Color = "#c9c3b6", Width = 1 }, Layer = Plotly.Blazor.LayoutLib.ShapeLib.LayerEnum.Below,
        })];
        layout.Annotations = [.. axes.SelectMany((a, i) => new[]
        {
            AxisEnd(i, 1.0, a.Text(a.Hi), Plotly.Blazor.LayoutLib.AnnotationLib.YAnchorEnum.Bottom),
            AxisEnd(i, 0.0, a.Text(a.Lo), Plotly.Blazor.LayoutLib.AnnotationLib.YAnchorEnum.Top),
        })];
        return (data, layout);
    }

    /// <summary>Desirability 0 → faint, 1 → ink.</summary>
    public static string Shade(double desirability)
    {
        var t = double.IsFinite(desirability) ? Math.Clamp(desirability, 0, 1) : 0;
        int Mix(int from, int to) => (int)Math.Round(from + t * (to - from));
        return string.Create(CultureInfo.InvariantCulture, $"rgba({Mix(185, 22)},{Mix(198, 50)},{Mix(211, 79)},{0.35 + 0.55 * t:0.##})");
    }

    private static Scatter Points(string name, List<CandidateDto> shown, ResponseSpec first, ResponseSpec second, string colour) => new()
    {
        Name = name,
        Mode = ModeFlag.Markers,
        X = ChartStyle.Values(shown.Select(c => c.Predicted[first.Name].Mean)),
        Y = ChartStyle.Values(shown.Select(c => c.Predicted[second.Name].Mean)),
        ErrorX = new ErrorX { Array = ChartStyle.Values(shown.Select(c => c.Predicted[first.Name].Sd ?? 0)), Color = colour, Thickness = 1, Width = 0 },
        ErrorY = new ErrorY { Array = ChartStyle.Values(shown.Select(c => c.Predicted[second.Name].Sd ?? 0)), Color = colour, Thickness = 1, Width = 0 },
        TextArray = [.. shown.Select(c => $"Candidate {c.Rank}{(c.Extrapolating ? " (extrapolating)" : "")}<br>{first.Name} {AnalysisText.Predicted(c.Predicted[first.Name], first.Unit)}<br>{second.Name} {AnalysisText.Predicted(c.Predicted[second.Name], second.Unit)}")],
        HoverTemplate = "%{text}<extra></extra>",
        Marker = new Marker { Color = colour, Size = 9, Line = new Plotly.Blazor.Traces.ScatterLib.MarkerLib.Line { Color = "#ffffff", Width = 1 } },
    };

    private static IEnumerable<Shape> LimitLines(ResponseSpec response, string axis)
    {
        foreach (var limit in new[] { response.Lower, response.Upper })
        {
            if (limit is not { } at || response.Goal == ResponseGoal.Target) continue;
            var line = new Plotly.Blazor.LayoutLib.ShapeLib.Line { Color = ChartStyle.Brick, Width = 1.5m, Dash = "dash" };
            yield return axis == "x"
                ? new Shape { Type = Plotly.Blazor.LayoutLib.ShapeLib.TypeEnum.Line, XRef = "x", YRef = "paper", X0 = at, X1 = at, Y0 = 0, Y1 = 1, Line = line }
                : new Shape { Type = Plotly.Blazor.LayoutLib.ShapeLib.TypeEnum.Line, XRef = "paper", YRef = "y", X0 = 0, X1 = 1, Y0 = at, Y1 = at, Line = line };
        }
    }

    private static Annotation AxisEnd(int axis, double y, string text, Plotly.Blazor.LayoutLib.AnnotationLib.YAnchorEnum anchor) => new()
    {
        X = axis, Y = y, XRef = "x", YRef = "y", Text = text, ShowArrow = false, YAnchor = anchor,
        YShift = anchor == Plotly.Blazor.LayoutLib.AnnotationLib.YAnchorEnum.Bottom ? 4 : -4,
        Font = new Plotly.Blazor.LayoutLib.AnnotationLib.Font { Size = 10, Color = ChartStyle.Muted },
    };

    private static int IndexOf(IReadOnlyList<string> levels, string level)
    {
        for (var i = 0; i < levels.Count; i++) if (levels[i] == level) return i;
        return -1;
    }
}
