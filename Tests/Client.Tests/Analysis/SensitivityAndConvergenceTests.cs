using Bunit;
using Runfold.Client.Pages;
using Runfold.Shared.Studies;
using Runfold.Tests.Samples;

namespace Runfold.Client.Tests.Analysis;

/// <summary>The sensitivity page (ranking across responses, one response's indices with intervals and direction)
/// and the convergence page (the history of the analysis), in each of their states.</summary>
public sealed class SensitivityAndConvergenceTests : AnalysisTestContext
{
    [Fact]
    public void Factors_are_ranked_across_responses_by_the_weighted_total_effect()
    {
        var (study, snapshot) = Serve();
        var cut = Render<SensitivityPage>(p => p.Add(c => c.StudyId, 1));
        var rows = cut.FindAll(".sensitivity-matrix tbody tr");
        Assert.Equal(study.Factors.Count, rows.Count);

        // Weights 1, 0.5, 0.5: the weighted mean of the total-effect indices, largest first.
        var expected = study.Factors.Select(f => (f.Name, Weighted:
                (1 * Total(snapshot, 0, f.Name) + 0.5 * Total(snapshot, 1, f.Name) + 0.5 * Total(snapshot, 2, f.Name)) / 2))
            .OrderByDescending(x => x.Weighted).ToList();
        Assert.Equal(expected.Select(e => e.Name), rows.Select(r => r.QuerySelector("th code")!.TextContent));
        Assert.Equal(expected[0].Weighted.ToString("0.00", System.Globalization.CultureInfo.InvariantCulture), rows[0].QuerySelectorAll("td").Last().TextContent.Trim());
    }

    [Fact]
    public void One_response_shows_first_order_and_total_indices_with_intervals_and_the_direction_in_words()
    {
        var (_, snapshot) = Serve();
        var cut = Render<SensitivityPage>(p => p.Add(c => c.StudyId, 1));
        var table = cut.Find(".sensitivity-one table");
        var top = snapshot.Responses[0].Sensitivity.MaxBy(s => s.Total)!;
        var first = table.QuerySelector("tbody tr")!;
        Assert.Equal(top.Factor, first.QuerySelector("code")!.TextContent);
        Assert.Contains(top.Direction switch { EffectDirectionDto.Raises => "raises", EffectDirectionDto.Lowers => "lowers", EffectDirectionDto.Mixed => "raises or lowers", _ => "no clear effect" },
            first.TextContent, StringComparison.Ordinal);
        Assert.Contains($"{top.TotalLow:0.00} – {top.TotalHigh:0.00}", first.TextContent, StringComparison.Ordinal);
        Assert.NotNull(cut.Find(".sensitivity-one .analysis-chart"));
    }

    [Fact]
    public void A_response_without_a_ranking_says_so()
    {
        var (study, runs) = SampleAnalysis.HeatSink(done: 3);
        Catalog.Study = Outcome<StudyDetail>.Ok(study);
        Analysis.Latest = Outcome<AnalysisSnapshotDto?>.Ok(SampleAnalysis.Snapshot(study, runs));
        var cut = Render<SensitivityPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Contains("No sensitivity ranking in this snapshot yet", cut.Markup, StringComparison.Ordinal);
        Assert.Contains("A model needs at least 5 done runs", cut.Find("[aria-label='One response'] p.muted").TextContent, StringComparison.Ordinal);
    }

    [Fact]
    public async Task The_history_loads_then_shows_the_trend_and_every_analysis()
    {
        var (study, runs) = SampleAnalysis.HeatSink();
        var history = SampleAnalysis.History(study, runs);
        Catalog.Study = Outcome<StudyDetail>.Ok(study);
        Analysis.Latest = Outcome<AnalysisSnapshotDto?>.Ok(history[^1]);
        var cut = Render<ConvergencePage>(p => p.Add(c => c.StudyId, 1));
        Assert.Contains("Loading the history", cut.Markup, StringComparison.Ordinal);

        Analysis.History = Outcome<IReadOnlyList<AnalysisHistoryPointDto>>.Ok([.. history.Select(ToPoint)]);
        Analysis.Latest = Outcome<AnalysisSnapshotDto?>.Ok(history[^1] with { Version = history.Count + 1 });
        await Analysis.RaiseAsync(new StudyLiveEvent(1, StudyLiveEventKind.Snapshot, 99, history.Count + 1));
        cut.WaitForAssertion(() => Assert.Equal(history.Count, cut.FindAll("[aria-label=Analyses] tbody tr").Count));
        var newest = cut.Find("[aria-label=Analyses] tbody tr");
        Assert.Equal(history[^1].Version.ToString(System.Globalization.CultureInfo.InvariantCulture), newest.QuerySelector("th")!.TextContent);
        Assert.Contains("more runs, the best desirability", cut.Find(".lead-text").TextContent, StringComparison.Ordinal);
        Assert.Equal(2, cut.FindAll(".analysis-chart").Count);
        Assert.Equal(2, Analysis.HistoryReads);
    }

    [Fact]
    public void No_history_and_a_failed_history_are_sentences()
    {
        Serve();
        Analysis.History = Outcome<IReadOnlyList<AnalysisHistoryPointDto>>.Ok([]);
        var cut = Render<ConvergencePage>(p => p.Add(c => c.StudyId, 1));
        Assert.Contains("No analyses yet", cut.Find(".empty-state").TextContent, StringComparison.Ordinal);

        Analysis.History = Outcome<IReadOnlyList<AnalysisHistoryPointDto>>.Forbidden("As a viewer you may not see the analysis.");
        var failed = Render<ConvergencePage>(p => p.Add(c => c.StudyId, 2));
        Assert.Equal("As a viewer you may not see the analysis.", failed.Find(".notice-error").TextContent);
    }

    private static double Total(AnalysisSnapshotDto snapshot, int response, string factor) =>
        snapshot.Responses[response].Sensitivity.Single(s => s.Factor == factor).Total;

    private static AnalysisHistoryPointDto ToPoint(AnalysisSnapshotDto s) => new(s.Version, s.BasedOnRuns, s.ComputedAt,
        s.Candidates.Count == 0 ? null : s.Candidates.Max(c => c.Desirability),
        s.Responses.Where(r => r.Model is not null).ToDictionary(r => r.Name, r => r.Model!.Nrmse));
}
