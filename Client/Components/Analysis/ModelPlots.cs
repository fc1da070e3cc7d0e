using PlotLayout = Plotly.Blazor.Layout;
using Plotly.Blazor;
using Plotly.Blazor.Traces;
using Plotly.Blazor.Traces.ScatterLib;
using Runfold.Shared.Studies;

namespace Runfold.Client.Components.Analysis;

/// <summary>The charts of the model page, built from the snapshot: predicted against observed, residuals,
/// main-effect curves and the response surface.</summary>
public static class ModelPlots
{
    /// <summary>Cross-validated predictions against observations, on equal axes, with the line y = x: points on
    /// the line are predicted exactly by a model that did not see them.</summary>
    public static (IList<ITrace> Data, PlotLayout Layout) PredictedVsObserved(FitCheckDto check, string? unit)
    {
        ArgumentNullException.ThrowIfNull(check);
        var (lo, hi) = Span(check.Observed.Concat(check.Predicted));
        var layout = ChartStyle.NewLayout(340);
        layout.XAxis = [Axis(ChartStyle.XAxis(AnalysisText.Label("observed", unit)), lo, hi)];
        layout.YAxis = [YAxis(ChartStyle.YAxis(AnalysisText.Label("predicted, cross-validated", unit)), lo, hi)];
        IList<ITrace> data =
        [
            new Scatter
            {
                Name = "y = x",
                Mode = ModeFlag.Lines,
                X = ChartStyle.Values([lo, hi]),
                Y = ChartStyle.Values([lo, hi]),
                Line = new Line { Color = ChartStyle.Muted, Dash = "dash", Width = 1 },
                HoverInfo = HoverInfoFlag.Skip,
            },
            RunPoints(check, check.Observed, check.Predicted, "Run %{text}<br>observed %{x}<br>predicted %{y}<extra></extra>"),
        ];
        return (data, layout);
    }

    /// <summary>Residuals (observed − cross-validated prediction) against the prediction, with the band of one
    /// cross-validated RMSE either side of zero: points far outside it are the runs the model misses most.</summary>
    public static (IList<ITrace> Data, PlotLayout Layout) Residuals(FitCheckDto check, double cvRmse, string? unit)
    {
        ArgumentNullException.ThrowIfNull(check);
        var (lo, hi) = Span(check.Predicted);
        var layout = ChartStyle.NewLayout(240);
        layout.XAxis = [Axis(ChartStyle.XAxis(AnalysisText.Label("predicted, cross-validated", unit)), lo, hi)];
        layout.YAxis = [ChartStyle.YAxis(AnalysisText.Label("residual", unit))];
        IList<ITrace> data =
        [
            new Scatter
            {
                Name = "± cross-validated RMSE",
                Mode = ModeFlag.Lines,
                X = ChartStyle.Values([lo, hi, hi, lo, lo]),
                Y = ChartStyle.Values([-cvRmse, -cvRmse, cvRmse, cvRmse, -cvRmse]),
                Fill = FillEnum.ToSelf,
                FillColor = "rgba(47,158,143,0.12)",
                Line = new Line { Width = 0 },
                HoverInfo = HoverInfoFlag.Skip,
            },
            new Scatter
            {
                Name = "zero",
                Mode = ModeFlag.Lines,
                X = ChartStyle.Values([lo, hi]),
                Y = ChartStyle.Values([0.0, 0.0]),
                Line = new Line { Color = ChartStyle.Muted, Width = 1 },
                HoverInfo = HoverInfoFlag.Skip,
            },
            RunPoints(check, check.Predicted, check.Residuals, "Run %{text}<br>predicted %{x}<br>residual %{y}<extra></extra>"),
        ];
        return (data, layout);
    }

    /// <summary>A main-effect curve: the response averaged over the other factors along one factor, with the
    /// spread of the response at each value as a band (categorical factors: points with bars).</summary>
    public static (IList<ITrace> Data, PlotLayout Layout) MainEffect(MainEffectDto effect, FactorSpec? factor, string response, string? unit)
    {
        ArgumentNullException.ThrowIfNull(effect);
        var layout = ChartStyle.NewLayout(210, left: 56, bottom: 44, top: 8);
        layout.XAxis = [ChartStyle.XAxis(AnalysisText.Label(effect.Factor, factor?.Unit))];
        // The panel names the response; the small charts' axes carry only its unit.
        layout.YAxis = [ChartStyle.YAxis(unit is null ? "" : $"[{unit}]")];
        if (factor?.Kind == FactorKind.Categorical)
        {
            var levels = factor.Levels ?? [];
            var names = effect.Natural.Select(i => (int)i >= 0 && (int)i < levels.Count ? levels[(int)i] : Formats.Number(i));
            return (
            [
                new Scatter
                {
                    Mode = ModeFlag.Markers,
                    X = ChartStyle.Values(names),
                    Y = ChartStyle.Values(effect.Mean),
                    ErrorY = new ErrorY { Array = ChartStyle.Values(effect.Spread), Color = ChartStyle.Teal, Thickness = 1.5m },
                    Marker = new Marker { Color = ChartStyle.Ink, Size = 9 },
                    HoverTemplate = $"%{{x}}: {response} %{{y}}<extra></extra>",
                },
            ], layout);
        }
        if (factor?.Scale == FactorScale.Log) layout.XAxis[0].Type = Plotly.Blazor.LayoutLib.XAxisLib.TypeEnum.Log;
        return (
        [
            new Scatter
            {
                Mode = ModeFlag.Lines,
                X = ChartStyle.Values(effect.Natural),
                Y = ChartStyle.Values(effect.Mean.Zip(effect.Spread, (m, s) => m - s)),
                Line = new Line { Width = 0 },
                HoverInfo = HoverInfoFlag.Skip,
            },
            new Scatter
            {
                Mode = ModeFlag.Lines,
                X = ChartStyle.Values(effect.Natural),
                Y = ChartStyle.Values(effect.Mean.Zip(effect.Spread, (m, s) => m + s)),
                Fill = FillEnum.ToNextY,
                FillColor = "rgba(47,158,143,0.15)",
                Line = new Line { Width = 0 },
                HoverInfo = HoverInfoFlag.Skip,
            },
            new Scatter
            {
                Mode = ModeFlag.Lines,
                X = ChartStyle.Values(effect.Natural),
                Y = ChartStyle.Values(effect.Mean),
                Line = new Line { Color = ChartStyle.Ink, Width = 2.5m },
                HoverTemplate = $"%{{x}}: {response} %{{y}}<extra></extra>",
            },
        ], layout);
    }

    /// <summary>The smallest and largest finite value, padded by 5 % (a flat set gets ±1).</summary>
    public static (double Lo, double Hi) Span(IEnumerable<double> values)
    {
        var finite = values.Where(double.IsFinite).ToList();
        if (finite.Count == 0) return (0, 1);
        var (lo, hi) = (finite.Min(), finite.Max());
        if (hi <= lo) return (lo - 1, hi + 1);
        var pad = 0.05 * (hi - lo);
        return (lo - pad, hi + pad);
    }

    /// <summary>One marker per done run, its number in the hover text.</summary>
    private static Scatter RunPoints(FitCheckDto check, IEnumerable<double> x, IEnumerable<double> y, string hover) => new()
    {
        Name = "runs",
        Mode = ModeFlag.Markers,
        X = ChartStyle.Values(x),
        Y = ChartStyle.Values(y),
        TextArray = [.. check.RunNumbers.Select(n => n.ToString(System.Globalization.CultureInfo.InvariantCulture))],
        HoverTemplate = hover,
        Marker = new Marker { Color = ChartStyle.Ink, Size = 8, Opacity = 0.8m },
    };

    private static Plotly.Blazor.LayoutLib.XAxis Axis(Plotly.Blazor.LayoutLib.XAxis axis, double lo, double hi)
    {
        axis.Range = [lo, hi];
        return axis;
    }

    private static Plotly.Blazor.LayoutLib.YAxis YAxis(Plotly.Blazor.LayoutLib.YAxis axis, double lo, double hi)
    {
        axis.Range = [lo, hi];
        return axis;
    }
}
