using Bunit;
using Microsoft.AspNetCore.Components.Web;
using Runfold.Client.Components;
using Runfold.Shared.Studies;

namespace Runfold.Client.Tests;

/// <summary>The run board's new parts: filters, the keyboard-navigable run table, the progress panel and the
/// studies list's last activity and best candidate.</summary>
public sealed class RunBoardComponentTests : BunitContext
{
    private static readonly DateTimeOffset At = new(2026, 11, 30, 8, 15, 0, TimeSpan.Zero);
    private static readonly FactorSpec[] Factors = [new("fin_height", FactorKind.Continuous, 20, 60, Unit: "mm")];
    private static readonly ResponseSpec[] Responses = [new("mass", ResponseGoal.Minimize, Unit: "g")];

    public RunBoardComponentTests() => JSInterop.Mode = JSRuntimeMode.Loose;

    private static RunDto Run(int number, RunState state, string? assignee = null, int wave = 1) =>
        new(number * 10, number, wave, state, new Dictionary<string, FactorValue> { ["fin_height"] = FactorValue.Of(20 + number) }, assignee);

    private static readonly RunDto[] Runs =
    [
        Run(1, RunState.Done, "ana"), Run(2, RunState.Claimed, "ana"), Run(3, RunState.Claimed, "ben"),
        Run(4, RunState.Open), Run(5, RunState.Open, wave: 2), Run(6, RunState.Failed, "ben", wave: 2),
    ];

    [Fact]
    public void Filters_pick_runs_by_state_wave_assignee_and_mine()
    {
        Assert.Equal([2, 3], new RunFilter(State: RunState.Claimed).Apply(Runs, "ana").Select(r => r.Number));
        Assert.Equal([5, 6], new RunFilter(Wave: 2).Apply(Runs, "ana").Select(r => r.Number));
        Assert.Equal([3, 6], new RunFilter(Assignee: "BEN").Apply(Runs, "ana").Select(r => r.Number));
        Assert.Equal([1, 2], new RunFilter(Mine: true).Apply(Runs, "ana").Select(r => r.Number));
        Assert.Empty(new RunFilter(Mine: true).Apply(Runs, null));
        Assert.Same(Runs, RunFilter.All.Apply(Runs, "ana"));
    }

    [Fact]
    public void The_filter_bar_reports_the_new_filter_and_offers_to_show_all()
    {
        RunFilter? chosen = null;
        var cut = Render<RunFilters>(p => p.Add(c => c.Filter, new RunFilter(Wave: 2)).Add(c => c.Waves, [1, 2]).Add(c => c.Assignees, ["ana", "ben"])
            .Add(c => c.Shown, 2).Add(c => c.Total, 6).Add(c => c.FilterChanged, f => chosen = f));
        Assert.Equal("2 of 6 runs", cut.Find("#filter-count").TextContent);
        cut.Find("#filter-state").Change("Claimed");
        Assert.Equal(new RunFilter(RunState.Claimed, 2), chosen);
        cut.Find("#filter-mine").Change(true);
        Assert.True(chosen!.Mine);
        cut.Find("#filter-clear").Click();
        Assert.Equal(RunFilter.All, chosen);
    }

    [Fact]
    public void The_run_table_has_loading_and_empty_states()
    {
        Assert.Contains("Loading runs", Render<RunTable>(p => p.Add(c => c.Runs, null).Add(c => c.Factors, Factors).Add(c => c.Responses, Responses)).Markup, StringComparison.Ordinal);
        var empty = Render<RunTable>(p => p.Add(c => c.Runs, []).Add(c => c.Factors, Factors).Add(c => c.Responses, Responses).Add(c => c.EmptyText, "No run matches these filters."));
        Assert.Equal("No run matches these filters.", empty.Find(".empty-runs").TextContent);
    }

    [Fact]
    public void Rows_are_reached_with_one_tab_stop_and_enter_opens_a_run()
    {
        RunDto? opened = null;
        var cut = Render<RunTable>(p => p.Add(c => c.Runs, Runs).Add(c => c.Factors, Factors).Add(c => c.Responses, Responses)
            .Add(c => c.OnOpen, r => opened = r).Add(c => c.Me, "ana"));
        cut.WaitForAssertion(() => Assert.Equal(6, cut.FindAll("button.run-open").Count));
        var buttons = cut.FindAll("button.run-open");
        Assert.Equal(["0", "-1", "-1", "-1", "-1", "-1"], buttons.Select(b => b.GetAttribute("tabindex")));
        Assert.Equal("Open run 1", buttons[0].GetAttribute("aria-label"));
        Assert.Contains("row-mine", cut.FindAll("tbody tr")[1].ClassName ?? "", StringComparison.Ordinal);

        cut.Find(".grid-scroll").KeyDown(new KeyboardEventArgs { Key = "ArrowDown" });
        cut.Find(".grid-scroll").KeyDown(new KeyboardEventArgs { Key = "ArrowDown" });
        cut.WaitForAssertion(() => Assert.Equal("0", cut.FindAll("button.run-open")[2].GetAttribute("tabindex")));
        Assert.Equal("-1", cut.FindAll("button.run-open")[0].GetAttribute("tabindex"));
        cut.FindAll("button.run-open")[2].Click(); // Enter on a focused button is a click
        Assert.Equal(3, opened?.Number);
    }

    [Fact]
    public void The_progress_panel_shows_loading_error_and_people_with_their_runs()
    {
        Assert.Contains("Loading the progress", Render<RunProgressPanel>(p => p.Add(c => c.Progress, null)).Markup, StringComparison.Ordinal);
        var failed = Render<RunProgressPanel>(p => p.Add(c => c.Progress, Outcome<RunProgressDto>.NotFound("Study 9 does not exist or you are not a member of it.")));
        Assert.Contains("Study 9 does not exist", failed.Find(".notice-error").TextContent, StringComparison.Ordinal);

        var empty = new RunProgressDto([], [new BurndownPointDto(At, 10, 10)], new FinishEstimateDto(10, 0, null, 0, null), At);
        var none = Render<RunProgressPanel>(p => p.Add(c => c.Progress, Outcome<RunProgressDto>.Ok(empty)));
        Assert.Contains("Nobody has claimed a run yet", none.Find(".empty-people").TextContent, StringComparison.Ordinal);
        Assert.Contains("no run has been timed so far", none.Find("#finish-estimate").TextContent, StringComparison.Ordinal);

        var busy = new RunProgressDto(
            [new AnalystProgressDto("ana", "Ana Ruiz", 9, 1, 0), new AnalystProgressDto("ben", null, 8, 1, 1)],
            [new BurndownPointDto(At, 40, 40), new BurndownPointDto(At.AddHours(5), 21, 40)],
            RunProgressMath.Estimate(21, 2, [TimeSpan.FromHours(2), TimeSpan.FromHours(3), TimeSpan.FromHours(4)], At.AddHours(5)),
            At.AddHours(5));
        var cut = Render<RunProgressPanel>(p => p.Add(c => c.Progress, Outcome<RunProgressDto>.Ok(busy)));
        var rows = cut.FindAll("table.analysts tbody tr");
        Assert.Equal(2, rows.Count);
        Assert.Contains("(Ana Ruiz)", rows[0].TextContent, StringComparison.Ordinal);
        Assert.Equal(["9", "1", "0"], rows[0].QuerySelectorAll("td").Take(3).Select(td => td.TextContent));
        // 21 runs, 2 people, median 3 h: 11 rounds → 33 h after 13:15 UTC.
        Assert.Equal("Expected finish about 2026-12-01 22:15 UTC: 21 runs left, 2 people working (holding claims or with results in the last 7 days), " +
                     "3 h per run (median from claim to result over 3 runs), so about 11 runs each, one after another. A rough guide, not a promise.",
            cut.Find("#finish-estimate").TextContent);
        Assert.Equal("21 of 40 runs left", cut.Find(".burndown").GetAttribute("aria-label"));
    }

    [Fact]
    public void A_study_card_shows_the_last_activity_and_the_best_candidate_as_a_prediction()
    {
        var best = new BestCandidateSummary(7, 26, At, 0.8123, Extrapolating: true, Verified: false,
            [new PredictedResponseSummary("thermal_resistance", "K/W", 0.41234, 0.0183), new PredictedResponseSummary("mass", "g", 118.4, null)]);
        var cut = Render<StudyList>(p => p.Add(c => c.Studies,
        [
            new StudySummary(7, "Heat sink", new RunCounts(10, 2, 26, 2), At, At.AddMinutes(5), "ana stored the result of run 27 (revision 1)", best),
            new StudySummary(8, "Fresh", new RunCounts(40, 0, 0, 0), At, null),
        ]));
        var cards = cut.FindAll(".study-card");
        Assert.Equal("2026-11-30 08:20 UTC", cards[0].QuerySelector(".last-activity time")!.TextContent);
        Assert.Equal("ana stored the result of run 27 (revision 1)", cards[0].QuerySelector(".last-activity .what")!.TextContent);
        var glance = cards[0].QuerySelector(".best-candidate")!;
        Assert.Contains("desirability 0.81", glance.TextContent, StringComparison.Ordinal);
        Assert.Contains("0.4123 ± 0.0183 K/W", glance.TextContent, StringComparison.Ordinal);
        Assert.Contains("118.4 g", glance.TextContent, StringComparison.Ordinal);
        Assert.NotNull(glance.QuerySelector(".pill-unverified"));
        Assert.Contains("extrapolating", glance.TextContent, StringComparison.Ordinal);
        Assert.Contains("analysis snapshot 7 (26 runs", glance.TextContent, StringComparison.Ordinal);
        Assert.Null(cards[1].QuerySelector(".best-candidate"));
        Assert.Null(cards[1].QuerySelector(".last-activity"));
    }

    [Fact]
    public void The_empty_studies_list_offers_the_set_up_page_to_those_who_may_create()
    {
        var cut = Render<StudyList>(p => p.Add(c => c.Studies, []).Add(c => c.CanCreate, true));
        Assert.Equal("studies/new", cut.Find(".empty-state a.button").GetAttribute("href"));
    }
}
