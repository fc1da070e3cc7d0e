using System.Text.RegularExpressions;
using System.Xml.Linq;
using Runfold.Server.Reports;
using Runfold.Shared.Studies;
using Runfold.Tests.Samples;

namespace Runfold.Server.Tests.Reports;

/// <summary>The report writer alone: one self-contained file, every section, every study text encoded, the same
/// bytes for the same input.</summary>
public sealed class StudyReportWriterTests
{
    private const string Evil = "<script>alert('x')</script>&\"";

    [Fact]
    public void The_report_holds_progress_candidates_with_intervals_fit_check_sensitivity_and_the_cautions()
    {
        var (study, runs) = SampleAnalysis.HeatSink();
        var snapshot = SampleAnalysis.Snapshot(study, runs, version: 5);
        var html = StudyReportWriter.Write(study, snapshot, SampleAnalysis.At);

        Assert.StartsWith("<!DOCTYPE html>", html, StringComparison.Ordinal);
        foreach (var section in new[] { "caution", "progress", "candidates", "verification", "fit-check", "sensitivity", "definition" })
            Assert.Contains($"<section id=\"{section}\"", html, StringComparison.Ordinal);
        Assert.Contains("26 of 40 runs done, 2 claimed, 1 failed, 11 open.", html, StringComparison.Ordinal);
        Assert.Contains("Analysis 5, based on 26 of 40 runs, 1 failed left out, computed 2026-11-30 08:15 UTC.", html, StringComparison.Ordinal);
        Assert.Equal(StudyReportWriter.TopCandidates, Regex.Matches(Section(html, "candidates"), @"<tr><th>\d+</th>").Count);
        Assert.Contains(" ± ", Section(html, "candidates"), StringComparison.Ordinal);
        Assert.Contains("P(pressure_drop ≤ 60 Pa)", Section(html, "candidates"), StringComparison.Ordinal);
        Assert.Contains("badge-extrapolating", Section(html, "candidates"), StringComparison.Ordinal);
        Assert.Contains("Gaussian process (kriging)", Section(html, "fit-check"), StringComparison.Ordinal);
        Assert.Equal(3, Regex.Matches(Section(html, "fit-check"), "<svg ").Count);
        Assert.Equal(3, Regex.Matches(Section(html, "sensitivity"), "<svg ").Count);
        Assert.Contains("licensed engineering practice", Section(html, "caution"), StringComparison.Ordinal);
    }

    [Fact]
    public void The_report_is_self_contained_and_its_charts_are_well_formed_svg()
    {
        var (study, runs) = SampleAnalysis.HeatSink();
        var html = StudyReportWriter.Write(study, SampleAnalysis.Snapshot(study, runs), SampleAnalysis.At);
        Assert.DoesNotContain("<script", html, StringComparison.OrdinalIgnoreCase);
        Assert.DoesNotContain("<link", html, StringComparison.OrdinalIgnoreCase);
        Assert.DoesNotContain("src=", html, StringComparison.OrdinalIgnoreCase);
        Assert.DoesNotContain("href=", html, StringComparison.OrdinalIgnoreCase);
        Assert.DoesNotContain("@import", html, StringComparison.OrdinalIgnoreCase);
        Assert.DoesNotContain("url(", html, StringComparison.OrdinalIgnoreCase);
        var svgs = Regex.Matches(html, "<svg .*?</svg>", RegexOptions.Singleline);
        Assert.True(svgs.Count >= 7);
        foreach (Match svg in svgs) XElement.Parse(svg.Value); // throws on malformed markup
        Assert.Equal(html, StudyReportWriter.Write(study, SampleAnalysis.Snapshot(study, runs), SampleAnalysis.At));
    }

    [Fact]
    public void Every_text_from_the_study_is_encoded()
    {
        var (study, runs) = SampleAnalysis.HeatSink();
        var evilStudy = study with
        {
            Name = "Fins " + Evil,
            Description = "Why " + Evil,
            Factors = [.. study.Factors.Select((f, i) => i == 0 ? f with { Unit = "mm" + Evil } : f)],
            Responses = [.. study.Responses.Select((r, i) => i == 0 ? r with { Unit = "K/W" + Evil } : r)],
        };
        var snapshot = SampleAnalysis.Snapshot(evilStudy, runs) with { Notice = "Note " + Evil };
        snapshot = snapshot with
        {
            Responses = [.. snapshot.Responses.Select((r, i) => i == 0
                ? r with { Unit = "K/W" + Evil, Model = r.Model! with { Reason = "Because " + Evil } }
                : r)],
        };
        var html = StudyReportWriter.Write(evilStudy, snapshot, SampleAnalysis.At);
        Assert.DoesNotContain("<script", html, StringComparison.OrdinalIgnoreCase);
        Assert.DoesNotContain("alert('x')", html, StringComparison.Ordinal);
        Assert.Contains("Fins &lt;script&gt;alert(&#x27;x&#x27;)&lt;/script&gt;&amp;&quot;", html, StringComparison.Ordinal);
        Assert.Contains("Note &lt;script&gt;", html, StringComparison.Ordinal);
        Assert.Contains("mm&lt;script&gt;", html, StringComparison.Ordinal);
        Assert.Contains("K/W&lt;script&gt;", html, StringComparison.Ordinal);
        foreach (Match svg in Regex.Matches(html, "<svg .*?</svg>", RegexOptions.Singleline)) XElement.Parse(svg.Value);
    }

    [Fact]
    public void Before_the_first_snapshot_the_report_says_so_and_still_carries_progress_and_the_cautions()
    {
        var (study, _) = SampleAnalysis.HeatSink(done: 0);
        var html = StudyReportWriter.Write(study, null, SampleAnalysis.At);
        Assert.Contains("No analysis snapshot exists yet.", html, StringComparison.Ordinal);
        Assert.Contains("No surrogate model has been fitted yet", html, StringComparison.Ordinal);
        Assert.Contains("licensed engineering practice", html, StringComparison.Ordinal);
        Assert.DoesNotContain("<section id=\"candidates\"", html, StringComparison.Ordinal);
    }

    [Theory]
    [InlineData("Plate-fin heat sink: v2 (final)", "plate-fin-heat-sink-v2-final-report-20261130-0815.html")]
    [InlineData("Kühlkörper", "k-hlk-rper-report-20261130-0815.html")]
    [InlineData("<<>>", "study-1-report-20261130-0815.html")]
    public void The_file_name_is_the_study_name_in_letters_digits_and_dashes_with_the_date(string name, string expected)
    {
        var (study, _) = SampleAnalysis.HeatSink();
        Assert.Equal(expected, StudyReportWriter.FileName(study with { Name = name }, SampleAnalysis.At));
    }

    [Theory]
    [InlineData(0, 1, new[] { 0, 0.2, 0.4, 0.6, 0.8, 1 })]
    [InlineData(0, 0.63, new[] { 0, 0.2, 0.4, 0.6, 0.8 })]
    [InlineData(0.083, 0.52, new[] { 0.1, 0.2, 0.3, 0.4, 0.5, 0.6 })]
    [InlineData(12, 97, new[] { 20, 40, 60, 80, 100.0 })]
    public void Chart_ticks_are_round_numbers_covering_the_range(double lo, double hi, double[] expected) =>
        Assert.Equal(expected, ReportSvg.NiceTicks(lo, hi, 5));

    private static string Section(string html, string id)
    {
        var start = html.IndexOf($"<section id=\"{id}\"", StringComparison.Ordinal);
        return html[start..html.IndexOf("</section>", start, StringComparison.Ordinal)];
    }
}
