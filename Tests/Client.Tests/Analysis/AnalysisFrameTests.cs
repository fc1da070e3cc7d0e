using Bunit;
using Runfold.Client.Pages;
using Runfold.Shared.Studies;

namespace Runfold.Client.Tests.Analysis;

/// <summary>The frame every analysis page shares: loading, failed, empty and with data, which snapshot the page is
/// based on, and how it follows the study live.</summary>
public sealed class AnalysisFrameTests : AnalysisTestContext
{
    [Fact]
    public void While_the_study_loads_it_says_so()
    {
        var cut = Render<ModelPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Contains("Loading the study", cut.Markup, StringComparison.Ordinal);
        Assert.Empty(cut.FindAll(".snapshot-status"));
    }

    [Fact]
    public void While_the_snapshot_loads_the_study_heading_is_already_there()
    {
        var (study, _) = Serve();
        Analysis.Latest = null;
        var cut = Render<SensitivityPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Equal(study.Name, cut.Find("h1").TextContent);
        Assert.Contains("Loading the analysis", cut.Find("[aria-busy=true]").TextContent, StringComparison.Ordinal);
    }

    [Fact]
    public void A_study_the_reader_cannot_see_is_a_sentence_with_a_way_back()
    {
        Catalog.Study = Outcome<StudyDetail>.NotFound("There is no study 9, or you are not a member of it.");
        var cut = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 9));
        var empty = cut.Find(".empty-state[role=alert]");
        Assert.Contains("There is no study 9, or you are not a member of it.", empty.TextContent, StringComparison.Ordinal);
        Assert.Equal("/", empty.QuerySelector("a")!.GetAttribute("href"));
    }

    [Fact]
    public void A_failed_analysis_read_is_shown_as_a_sentence()
    {
        Serve();
        Analysis.Latest = Outcome<AnalysisSnapshotDto?>.Forbidden("You are signed out; sign in again.");
        var cut = Render<ModelPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Equal("You are signed out; sign in again.", cut.Find(".notice-error").TextContent);
    }

    [Fact]
    public void Before_the_first_snapshot_it_says_what_happens_next_and_where_to_go()
    {
        Serve();
        Analysis.Latest = Outcome<AnalysisSnapshotDto?>.Ok(null);
        var cut = Render<ModelPage>(p => p.Add(c => c.StudyId, 1));
        var empty = cut.Find(".analysis-empty");
        Assert.Contains("No analysis yet", empty.TextContent, StringComparison.Ordinal);
        Assert.Contains("26 of 40 runs are done so far", empty.TextContent, StringComparison.Ordinal);
        Assert.Equal("studies/1/runs", empty.QuerySelector("a")!.GetAttribute("href"));
        Assert.Contains("No analysis snapshot yet", cut.Find(".snapshot-status").TextContent, StringComparison.Ordinal);
    }

    [Fact]
    public void The_page_says_which_snapshot_it_is_based_on_and_how_old_it_is()
    {
        Serve();
        var cut = Render<ModelPage>(p => p.Add(c => c.StudyId, 1));
        var status = cut.Find(".snapshot-status");
        Assert.Contains("Analysis 5", status.TextContent, StringComparison.Ordinal);
        Assert.Contains("based on 26 of 40 runs, 1 failed left out", status.TextContent, StringComparison.Ordinal);
        Assert.Contains("computed 40 s ago", status.TextContent, StringComparison.Ordinal);

        Clock.Advance(TimeSpan.FromMinutes(3)); // the age ticks by itself
        cut.WaitForAssertion(() => Assert.Contains("computed 3 min ago", cut.Find(".snapshot-age").TextContent, StringComparison.Ordinal));
    }

    [Fact]
    public async Task A_new_snapshot_is_read_and_shown_without_a_reload()
    {
        var (study, _) = Serve();
        var cut = Render<CandidatesPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Equal(1, Analysis.Followers);

        await Analysis.RaiseAsync(new StudyLiveEvent(1, StudyLiveEventKind.Progress, 51, Progress: new AnalysisProgressDto(1, 51, "fitting pressure_drop", 45)));
        cut.WaitForAssertion(() => Assert.Contains("Refitting: fitting pressure_drop", cut.Find(".snapshot-refit").TextContent, StringComparison.Ordinal));
        Assert.Equal("45", cut.Find("progress").GetAttribute("value"));

        var (_, runs) = Runfold.Tests.Samples.SampleAnalysis.HeatSink(done: 30);
        Analysis.Latest = Outcome<AnalysisSnapshotDto?>.Ok(Runfold.Tests.Samples.SampleAnalysis.Snapshot(study, runs, 6));
        await Analysis.RaiseAsync(new StudyLiveEvent(1, StudyLiveEventKind.Snapshot, 60, 6));
        cut.WaitForAssertion(() => Assert.Contains("Analysis 6", cut.Find(".snapshot-status").TextContent, StringComparison.Ordinal));
        Assert.Contains("based on 30 of 40 runs", cut.Find(".snapshot-status").TextContent, StringComparison.Ordinal);
        Assert.Empty(cut.FindAll(".snapshot-refit"));
    }

    [Fact]
    public async Task Results_newer_than_the_snapshot_are_announced_until_the_refit_arrives()
    {
        Serve(); // snapshot 5 is built from result-set version 50
        var cut = Render<ModelPage>(p => p.Add(c => c.StudyId, 1));
        await Analysis.RaiseAsync(new StudyLiveEvent(1, StudyLiveEventKind.Changed, 50));
        cut.WaitForAssertion(() => Assert.Empty(cut.FindAll(".snapshot-newer"))); // a claim: nothing new to analyse
        await Analysis.RaiseAsync(new StudyLiveEvent(1, StudyLiveEventKind.Changed, 52));
        cut.WaitForAssertion(() => Assert.Contains("newer results arrived", cut.Find(".snapshot-newer").TextContent, StringComparison.Ordinal));
    }

    [Fact]
    public async Task Leaving_the_page_stops_following_the_study()
    {
        Serve();
        Render<ConvergencePage>(p => p.Add(c => c.StudyId, 1));
        Assert.Equal(1, Analysis.Followers);
        await DisposeComponentsAsync();
        Assert.Equal(0, Analysis.Followers);
    }
}
