using PlotLayout = Plotly.Blazor.Layout;
using Plotly.Blazor;
using Plotly.Blazor.LayoutLib;

namespace Runfold.Client.Components.Analysis;

/// <summary>The house look of every chart: the board's colours and type (runfold.css), quiet grids, no logo,
/// a mode bar that shows on hover with only the buttons that help (zoom, pan, reset, save as image).</summary>
public static class ChartStyle
{
    public const string Ink = "#16324f";
    public const string InkSoft = "#2c4d70";
    public const string Teal = "#2f9e8f";
    public const string Amber = "#f2b134";
    public const string Brick = "#c4513a";
    public const string Muted = "#5f6b76";
    public const string Faint = "#b9c6d3";
    public const string GridLine = "#ece8df";
    public const string Text = "#1d2329";
    public const string FontFamily = "system-ui, -apple-system, \"Segoe UI\", Roboto, \"Noto Sans\", sans-serif";

    /// <summary>Colours for one line per response (convergence) or per series.</summary>
    public static readonly IReadOnlyList<string> Series = [Ink, Teal, Amber, Brick, "#7a5ea8", "#4f8fc0", "#8a6d3b"];

    /// <summary>A continuous scale from paper to ink, for surfaces and contours (low values light).</summary>
    public static readonly object[][] Sequential =
    [
        [0.0, "#f4efe2"], [0.25, "#cfe3dc"], [0.5, "#7fbfb2"], [0.75, "#2c6f8a"], [1.0, "#16324f"],
    ];

    public static Config Config() => new()
    {
        Responsive = true,
        DisplayLogo = false,
        DisplayModeBar = Plotly.Blazor.ConfigLib.DisplayModeBarEnum.Hover,
        ModeBarButtonsToRemove = new[] { "lasso2d", "select2d", "toggleSpikelines", "hoverCompareCartesian", "hoverClosestCartesian" },
    };

    /// <summary>A layout with the house font, margins and transparent background.</summary>
    public static PlotLayout NewLayout(int height, decimal left = 60, decimal bottom = 48, decimal top = 16, decimal right = 16) => new()
    {
        Height = height,
        AutoSize = true,
        Font = new Font { Family = FontFamily, Size = 12, Color = Text },
        PaperBgColor = "rgba(0,0,0,0)",
        PlotBgColor = "#ffffff",
        Margin = new Margin { L = left, R = right, T = top, B = bottom },
        HoverLabel = new HoverLabel { Font = new Plotly.Blazor.LayoutLib.HoverLabelLib.Font { Family = FontFamily, Size = 12 } },
        ShowLegend = false,
    };

    public static XAxis XAxis(string title) => new()
    {
        Title = new Plotly.Blazor.LayoutLib.XAxisLib.Title { Text = title },
        GridColor = GridLine,
        ZeroLineColor = "#dcd7cc",
        LineColor = "#dcd7cc",
        AutoMargin = Plotly.Blazor.LayoutLib.XAxisLib.AutoMarginFlag.True,
    };

    public static YAxis YAxis(string title) => new()
    {
        Title = new Plotly.Blazor.LayoutLib.YAxisLib.Title { Text = title },
        GridColor = GridLine,
        ZeroLineColor = "#dcd7cc",
        LineColor = "#dcd7cc",
        AutoMargin = Plotly.Blazor.LayoutLib.YAxisLib.AutoMarginFlag.True,
    };

    /// <summary>A horizontal legend above the plot.</summary>
    public static Legend TopLegend() => new()
    {
        Orientation = Plotly.Blazor.LayoutLib.LegendLib.OrientationEnum.H,
        X = 0,
        Y = 1.02m,
        YAnchor = Plotly.Blazor.LayoutLib.LegendLib.YAnchorEnum.Bottom,
    };

    /// <summary>Numbers as chart coordinates: Plotly takes objects; NaN and infinities become gaps.</summary>
    public static IList<object> Values(IEnumerable<double> values) =>
        [.. values.Select(v => double.IsFinite(v) ? (object)v : null!)];

    public static IList<object> Values(IEnumerable<string> values) => [.. values.Cast<object>()];
}
