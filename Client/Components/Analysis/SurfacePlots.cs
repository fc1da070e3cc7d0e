using PlotLayout = Plotly.Blazor.Layout;
using Plotly.Blazor;
using Plotly.Blazor.LayoutLib;
using Plotly.Blazor.Traces;

namespace Runfold.Client.Components.Analysis;

/// <summary>The surface explorer's chart: a 3-D surface or a contour map of the prediction, or of its standard
/// deviation (where the model is unsure).</summary>
public static class SurfacePlots
{
    /// <param name="limit">The response's hard limit, drawn as a red contour line on the map of the prediction.</param>
    public static (IList<ITrace> Data, PlotLayout Layout) Build(SurfaceGrid grid, Runfold.Shared.Studies.FactorSpec x, Runfold.Shared.Studies.FactorSpec y,
        string response, string? unit, double[][] mean, double[][] sd, bool contour, bool uncertainty, double? limit = null)
    {
        ArgumentNullException.ThrowIfNull(grid);
        ArgumentNullException.ThrowIfNull(x);
        ArgumentNullException.ThrowIfNull(y);
        var shown = uncertainty ? sd : mean;
        var colourTitle = AnalysisText.Label(uncertainty ? $"sd of {response}" : response, unit);
        var xs = ChartStyle.Values(grid.XValues);
        var ys = ChartStyle.Values(grid.YValues);
        IList<object> Rows(double[][] z) => [.. z.Select(row => (object)ChartStyle.Values(row))];

        if (contour)
        {
            var layout = ChartStyle.NewLayout(460, right: 24);
            layout.XAxis = [ChartStyle.XAxis(AnalysisText.Label(x.Name, x.Unit))];
            layout.YAxis = [ChartStyle.YAxis(AnalysisText.Label(y.Name, y.Unit))];
            if (x.Scale == Runfold.Shared.Studies.FactorScale.Log) layout.XAxis[0].Type = Plotly.Blazor.LayoutLib.XAxisLib.TypeEnum.Log;
            if (y.Scale == Runfold.Shared.Studies.FactorScale.Log) layout.YAxis[0].Type = Plotly.Blazor.LayoutLib.YAxisLib.TypeEnum.Log;
            IList<ITrace> traces =
            [
                new Contour
                {
                    X = xs,
                    Y = ys,
                    Z = Rows(shown),
                    ColorScale = ChartStyle.Sequential,
                    ColorBar = new Plotly.Blazor.Traces.ContourLib.ColorBar { Title = new Plotly.Blazor.Traces.ContourLib.ColorBarLib.Title { Text = colourTitle, Side = Plotly.Blazor.Traces.ContourLib.ColorBarLib.TitleLib.SideEnum.Right }, Thickness = 14 },
                    HoverTemplate = $"{x.Name} %{{x}}<br>{y.Name} %{{y}}<br>{(uncertainty ? "sd" : response)} %{{z}}<extra></extra>",
                },
            ];
            if (limit is { } at && !uncertainty)
            {
                traces.Add(new Contour
                {
                    X = xs,
                    Y = ys,
                    Z = Rows(mean),
                    ShowScale = false,
                    Contours = new Plotly.Blazor.Traces.ContourLib.Contours
                    {
                        Coloring = Plotly.Blazor.Traces.ContourLib.ContoursLib.ColoringEnum.Lines,
                        Start = (decimal)at, End = (decimal)at, Size = 1, ShowLabels = true,
                        LabelFont = new Plotly.Blazor.Traces.ContourLib.ContoursLib.LabelFont { Color = ChartStyle.Brick, Size = 12 },
                    },
                    ColorScale = new object[][] { [0.0, ChartStyle.Brick], [1.0, ChartStyle.Brick] },
                    Line = new Plotly.Blazor.Traces.ContourLib.Line { Width = 2.5m, Dash = "dash" },
                    HoverInfo = Plotly.Blazor.Traces.ContourLib.HoverInfoFlag.Skip,
                });
            }
            return (traces, layout);
        }

        var scene = new Scene
        {
            XAxis = new Plotly.Blazor.LayoutLib.SceneLib.XAxis { Title = new Plotly.Blazor.LayoutLib.SceneLib.XAxisLib.Title { Text = AnalysisText.Label(x.Name, x.Unit) }, GridColor = ChartStyle.GridLine },
            YAxis = new Plotly.Blazor.LayoutLib.SceneLib.YAxis { Title = new Plotly.Blazor.LayoutLib.SceneLib.YAxisLib.Title { Text = AnalysisText.Label(y.Name, y.Unit) }, GridColor = ChartStyle.GridLine },
            ZAxis = new Plotly.Blazor.LayoutLib.SceneLib.ZAxis { Title = new Plotly.Blazor.LayoutLib.SceneLib.ZAxisLib.Title { Text = AnalysisText.Label(response, unit) }, GridColor = ChartStyle.GridLine },
            AspectMode = Plotly.Blazor.LayoutLib.SceneLib.AspectModeEnum.Cube,
        };
        var surfaceLayout = ChartStyle.NewLayout(480, left: 0, bottom: 0, top: 0, right: 0);
        surfaceLayout.Scene = [scene];
        var surface = new Surface
        {
            X = xs,
            Y = ys,
            Z = Rows(mean),
            ColorScale = ChartStyle.Sequential,
            ColorBar = new Plotly.Blazor.Traces.SurfaceLib.ColorBar { Title = new Plotly.Blazor.Traces.SurfaceLib.ColorBarLib.Title { Text = colourTitle, Side = Plotly.Blazor.Traces.SurfaceLib.ColorBarLib.TitleLib.SideEnum.Right }, Thickness = 14 },
            HoverTemplate = $"{x.Name} %{{x}}<br>{y.Name} %{{y}}<br>{response} %{{z}}<extra></extra>",
        };
        if (uncertainty) surface.SurfaceColor = Rows(sd);
        return ([surface], surfaceLayout);
    }
}
