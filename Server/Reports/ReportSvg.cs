using System.Globalization;
using System.Text.Encodings.Web;
using System.Text.Unicode;
using System.Text;
using Runfold.Client.Components;
using Runfold.Client.Components.Analysis;
using Runfold.Shared.Studies;

namespace Runfold.Server.Reports;

/// <summary>The report's charts as inline SVG: no scripts, no external files, readable when printed. Every text
/// from the study is HTML-encoded.</summary>
public static class ReportSvg
{
    private const string Ink = "#16324f";
    private const string Teal = "#2f9e8f";
    private const string Amber = "#f2b134";
    private const string Brick = "#c4513a";
    private const string Open = "#b9c6d3";
    private const string Grid = "#e4e0d6";
    private const string Muted = "#5f6b76";

    /// <summary>The runs by state as one stacked bar.</summary>
    public static string StateBar(RunCounts counts)
    {
        ArgumentNullException.ThrowIfNull(counts);
        const double width = 640, height = 14;
        var svg = Open_(width, height, $"{counts.Done} of {counts.Total} runs done, {counts.Claimed} claimed, {counts.Failed} failed, {counts.Open} open");
        svg.Append(CultureInfo.InvariantCulture, $"""<rect width="{width}" height="{height}" rx="7" fill="#eceae4"/>""");
        var x = 0.0;
        foreach (var (count, colour) in new[] { (counts.Done, Teal), (counts.Claimed, Amber), (counts.Failed, Brick), (counts.Open, Open) })
        {
            if (count == 0 || counts.Total == 0) continue;
            var w = width * count / counts.Total;
            svg.Append(CultureInfo.InvariantCulture, $"""<rect x="{N(x)}" width="{N(w)}" height="{height}" fill="{colour}"/>""");
            x += w;
        }
        return svg.Append("</svg>").ToString();
    }

    /// <summary>Cross-validated predictions against the observed values, with the line y = x.</summary>
    public static string PredictedVsObserved(string response, string? unit, FitCheckDto check)
    {
        ArgumentNullException.ThrowIfNull(check);
        const double size = 280, left = 52, bottom = 40, top = 12, right = 12;
        var all = check.Observed.Concat(check.Predicted).Where(double.IsFinite).ToList();
        var (lo, hi) = all.Count == 0 ? (0.0, 1.0) : Pad(all.Min(), all.Max());
        var ticks = NiceTicks(lo, hi, 5).Where(t => t >= lo && t <= hi).ToList();
        double Sx(double v) => left + (v - lo) / (hi - lo) * (size - left - right);
        double Sy(double v) => size - bottom - (v - lo) / (hi - lo) * (size - top - bottom);

        var svg = Open_(size, size, $"Predicted against observed {response}: {check.Observed.Count} runs; points on the diagonal are predicted exactly.");
        foreach (var t in ticks)
        {
            svg.Append(CultureInfo.InvariantCulture, $"""<line x1="{N(Sx(t))}" y1="{top}" x2="{N(Sx(t))}" y2="{size - bottom}" stroke="{Grid}"/>""");
            svg.Append(CultureInfo.InvariantCulture, $"""<line x1="{left}" y1="{N(Sy(t))}" x2="{size - right}" y2="{N(Sy(t))}" stroke="{Grid}"/>""");
            svg.Append(CultureInfo.InvariantCulture, $"""<text x="{N(Sx(t))}" y="{size - bottom + 14}" text-anchor="middle">{E(Formats.Number(t))}</text>""");
            svg.Append(CultureInfo.InvariantCulture, $"""<text x="{left - 5}" y="{N(Sy(t) + 4)}" text-anchor="end">{E(Formats.Number(t))}</text>""");
        }
        svg.Append(CultureInfo.InvariantCulture, $"""<line x1="{N(Sx(lo))}" y1="{N(Sy(lo))}" x2="{N(Sx(hi))}" y2="{N(Sy(hi))}" stroke="{Muted}" stroke-dasharray="4 3"/>""");
        for (var i = 0; i < Math.Min(check.Observed.Count, check.Predicted.Count); i++)
        {
            if (!double.IsFinite(check.Observed[i]) || !double.IsFinite(check.Predicted[i])) continue;
            var run = i < check.RunNumbers.Count ? $"run {check.RunNumbers[i]}: " : "";
            svg.Append(CultureInfo.InvariantCulture, $"""<circle cx="{N(Sx(check.Observed[i]))}" cy="{N(Sy(check.Predicted[i]))}" r="3.2" fill="{Ink}" fill-opacity="0.75"><title>{E($"{run}observed {Formats.Number(check.Observed[i])}, predicted {Formats.Number(check.Predicted[i])}")}</title></circle>""");
        }
        svg.Append(CultureInfo.InvariantCulture, $"""<text x="{N((left + size - right) / 2)}" y="{size - 6}" text-anchor="middle" class="axis">{E("observed " + Unit(unit))}</text>""");
        svg.Append(CultureInfo.InvariantCulture, $"""<text transform="translate(12 {N((top + size - bottom) / 2)}) rotate(-90)" text-anchor="middle" class="axis">{E("predicted " + Unit(unit))}</text>""");
        return svg.Append("</svg>").ToString();
    }

    /// <summary>Total-effect indices as bars with their 95 % intervals, first-order indices as thin bars below,
    /// ranked by the total effect; the direction of each effect beside its name.</summary>
    public static string SensitivityBars(string response, IReadOnlyList<FactorSensitivityDto> ranking)
    {
        ArgumentNullException.ThrowIfNull(ranking);
        var rows = ranking.OrderByDescending(s => s.Total).ToList();
        const double width = 560, label = 170, right = 60, row = 30, top = 8;
        var height = top + rows.Count * row + 24;
        var max = Math.Max(0.05, rows.Count == 0 ? 1 : rows.Max(r => Math.Max(r.TotalHigh, r.Total)));
        max = NiceTicks(0, max, 4)[^1];
        double Sx(double v) => label + Math.Clamp(v, 0, max) / max * (width - label - right);

        var svg = Open_(width, height, $"Sensitivity ranking of {response}: total-effect indices with 95 % intervals, first-order indices below.");
        foreach (var t in NiceTicks(0, max, 4))
        {
            svg.Append(CultureInfo.InvariantCulture, $"""<line x1="{N(Sx(t))}" y1="{top}" x2="{N(Sx(t))}" y2="{N(height - 20)}" stroke="{Grid}"/>""");
            svg.Append(CultureInfo.InvariantCulture, $"""<text x="{N(Sx(t))}" y="{N(height - 6)}" text-anchor="middle">{E(Formats.Number(t))}</text>""");
        }
        for (var i = 0; i < rows.Count; i++)
        {
            var s = rows[i];
            var y = top + i * row;
            svg.Append(CultureInfo.InvariantCulture, $"""<text x="{label - 8}" y="{N(y + 15)}" text-anchor="end">{E($"{s.Factor} {AnalysisText.DirectionMark(s.Direction)}")}</text>""");
            svg.Append(CultureInfo.InvariantCulture, $"""<rect x="{label}" y="{N(y + 4)}" width="{N(Sx(s.Total) - label)}" height="12" fill="{Ink}"><title>{E($"{s.Factor}: total {AnalysisText.Index(s.Total)} ({AnalysisText.Index(s.TotalLow)} – {AnalysisText.Index(s.TotalHigh)}), first-order {AnalysisText.Index(s.FirstOrder)}; {AnalysisText.Direction(s.Direction)} {response}")}</title></rect>""");
            svg.Append(CultureInfo.InvariantCulture, $"""<line x1="{N(Sx(s.TotalLow))}" y1="{N(y + 10)}" x2="{N(Sx(s.TotalHigh))}" y2="{N(y + 10)}" stroke="{Amber}" stroke-width="2"/>""");
            svg.Append(CultureInfo.InvariantCulture, $"""<rect x="{label}" y="{N(y + 19)}" width="{N(Sx(s.FirstOrder) - label)}" height="5" fill="{Teal}"/>""");
            svg.Append(CultureInfo.InvariantCulture, $"""<text x="{N(width - right + 6)}" y="{N(y + 15)}">{E(AnalysisText.Index(s.Total))}</text>""");
        }
        return svg.Append("</svg>").ToString();
    }

    /// <summary>Round tick values covering [lo, hi]: steps of 1, 2 or 5 times a power of ten.</summary>
    public static IReadOnlyList<double> NiceTicks(double lo, double hi, int count)
    {
        if (!(hi > lo) || !double.IsFinite(lo) || !double.IsFinite(hi)) return [lo];
        var raw = (hi - lo) / Math.Max(1, count);
        var power = Math.Pow(10, Math.Floor(Math.Log10(raw)));
        var step = new[] { 1.0, 2, 5, 10 }.Select(m => m * power).First(s => s >= raw * 0.999);
        // Whole multiples of the step, so no sum of steps drifts off the round values.
        var first = (long)Math.Ceiling(lo / step - 1e-9);
        var last = (long)Math.Ceiling(hi / step - 1e-9);
        var ticks = new List<double>();
        for (var k = first; k <= last; k++) ticks.Add(Math.Round(k * step, 12));
        return ticks;
    }

    private static (double Lo, double Hi) Pad(double lo, double hi)
    {
        if (hi <= lo) return (lo - 1, hi + 1);
        var pad = (hi - lo) * 0.06;
        return (lo - pad, hi + pad);
    }

    private static StringBuilder Open_(double width, double height, string label) => new StringBuilder()
        .Append(CultureInfo.InvariantCulture, $"""<svg xmlns="http://www.w3.org/2000/svg" viewBox="0 0 {N(width)} {N(height)}" width="{N(width)}" height="{N(height)}" role="img" aria-label="{E(label)}">""");

    private static string Unit(string? unit) => unit is null ? "" : $"[{unit}]";

    private static string N(double value) => value.ToString("0.##", CultureInfo.InvariantCulture);

    private static string E(string text) => Html.Encode(text);

    private static readonly HtmlEncoder Html = HtmlEncoder.Create(UnicodeRanges.All);
}
