using Bunit;
using Microsoft.JSInterop;
using Runfold.Client.Components.Analysis;
using Runfold.Client.Pages;
using Runfold.Shared.Studies;
using Runfold.Tests.Samples;

namespace Runfold.Client.Tests.Analysis;

/// <summary>The manager view (signed in and through a share link) and the lead's share links panel.</summary>
public sealed class SummaryAndSharingTests : AnalysisTestContext
{
    [Fact]
    public void The_summary_shows_progress_the_top_five_candidates_the_cautions_and_the_report_download()
    {
        var (_, snapshot) = Serve(StudyRole.Viewer);
        var cut = Render<SummaryPage>(p => p.Add(c => c.StudyId, 1));
        Assert.Equal("26 of 40 runs done, 2 claimed, 1 failed, 11 open", cut.Find(".state-bar").GetAttribute("aria-label"));
        Assert.Equal(ManagerSummary.TopCount, cut.FindAll("table.candidates tbody tr").Count);
        Assert.Equal($"all {snapshot.Candidates.Count} candidates", cut.Find("[aria-label='Top candidates'] h2 a").TextContent);
        Assert.Contains("licensed engineering practice", cut.Find(".caution-note").TextContent, StringComparison.Ordinal);
        Assert.Equal("api/studies/1/report", cut.Find("#download-report").GetAttribute("href"));
        Assert.Equal(3, cut.FindAll(".fit-summary tbody tr").Count);
        Assert.Empty(cut.FindAll(".share-links")); // a viewer manages no share links
    }

    [Fact]
    public void Before_the_first_snapshot_the_summary_still_shows_progress_and_says_what_comes()
    {
        Serve(StudyRole.Viewer);
        Analysis.Latest = Outcome<AnalysisSnapshotDto?>.Ok(null);
        var cut = Render<SummaryPage>(p => p.Add(c => c.StudyId, 1));
        Assert.NotNull(cut.Find(".state-bar"));
        Assert.Contains("No analysis yet", cut.Find(".analysis-empty").TextContent, StringComparison.Ordinal);
        Assert.Empty(cut.FindAll("table.candidates"));
    }

    [Fact]
    public void The_lead_creates_copies_and_revokes_share_links()
    {
        Serve();
        Links.List = Outcome<IReadOnlyList<ShareLinkDto>>.Ok(
        [
            new ShareLinkDto(2, "design review <board>", "lena", SampleAnalysis.At, SampleAnalysis.At.AddDays(14), null, "/shared/abc"),
            new ShareLinkDto(1, null, "lena", SampleAnalysis.At.AddDays(-20), SampleAnalysis.At.AddDays(-6), null, null),
        ]);
        JSInterop.SetupVoid("navigator.clipboard.writeText", _ => true).SetVoidResult();
        var cut = Render<SummaryPage>(p => p.Add(c => c.StudyId, 1));
        var rows = cut.FindAll(".share-link-list tbody tr");
        Assert.Equal("design review <board>", rows[0].QuerySelector("th")!.TextContent); // a note is text
        Assert.Equal("http://localhost/shared/abc", rows[0].QuerySelector("input.share-url")!.GetAttribute("value"));
        Assert.Contains("revoked", rows[1].ClassName, StringComparison.Ordinal);
        Assert.Contains("expired 2026-11-24 08:15 UTC", rows[1].TextContent, StringComparison.Ordinal);
        Assert.Empty(rows[1].QuerySelectorAll("button"));

        rows[0].QuerySelectorAll("button")[0].Click();
        Assert.Equal("http://localhost/shared/abc", JSInterop.VerifyInvoke("navigator.clipboard.writeText").Arguments[0]);
        Assert.Equal("The link is copied.", cut.Find(".share-links .notice-ok").TextContent);

        cut.Find("#share-days").Change("30");
        cut.Find("#share-note").Change("board");
        cut.Find("#create-share-link").Click();
        Assert.Equal(new ShareLinkRequest(30, "board"), Assert.Single(Links.Created));
        Assert.Contains("works until 2026-12-30 08:15 UTC", cut.Find(".share-links .notice-ok").TextContent, StringComparison.Ordinal);

        cut.FindAll(".share-link-list tbody tr")[0].QuerySelectorAll("button")[1].Click();
        Assert.Equal([2], Links.Revoked);
        Assert.Contains("no longer opens", cut.Find(".share-links .notice-ok").TextContent, StringComparison.Ordinal);
    }

    [Fact]
    public void The_share_links_panel_says_when_it_loads_has_none_fails_or_cannot_copy()
    {
        Serve();
        Links.List = null;
        var loading = Render<ShareLinksPanel>(p => p.Add(c => c.StudyId, 1));
        Assert.Contains("Loading the share links", loading.Markup, StringComparison.Ordinal);

        Links.List = Outcome<IReadOnlyList<ShareLinkDto>>.Ok([]);
        Assert.Contains("No share links yet", Render<ShareLinksPanel>(p => p.Add(c => c.StudyId, 1)).Markup, StringComparison.Ordinal);

        Links.List = Outcome<IReadOnlyList<ShareLinkDto>>.Forbidden("As an analyst you may not see share links; that needs the lead role on this study.");
        Assert.Equal("As an analyst you may not see share links; that needs the lead role on this study.",
            Render<ShareLinksPanel>(p => p.Add(c => c.StudyId, 1)).Find(".notice-error").TextContent);

        Links.List = Outcome<IReadOnlyList<ShareLinkDto>>.Ok([new ShareLinkDto(3, null, "lena", SampleAnalysis.At, SampleAnalysis.At.AddDays(1), null, "/shared/x")]);
        JSInterop.SetupVoid("navigator.clipboard.writeText", _ => true).SetException(new JSException("denied"));
        var refused = Render<ShareLinksPanel>(p => p.Add(c => c.StudyId, 1));
        refused.Find(".share-link-list button").Click();
        Assert.Contains("did not allow copying", refused.Find(".notice-error").TextContent, StringComparison.Ordinal);

        Links.CreateAnswer = Outcome<ShareLinkDto>.Invalid(ValidationErrors.Single("note", "The note is longer than 200 characters."));
        refused.Find("#create-share-link").Click();
        Assert.Equal("The note is longer than 200 characters.", refused.Find(".notice-error").TextContent);
    }

    [Fact]
    public void A_share_link_opens_the_summary_with_the_report_through_the_link_and_nothing_of_the_team()
    {
        var (study, runs) = SampleAnalysis.HeatSink(role: StudyRole.Viewer);
        Shared.Answer = Outcome<SharedSummary>.Ok(new SharedSummary(study with { Members = [] }, SampleAnalysis.Snapshot(study, runs), SampleAnalysis.At.AddDays(14), "a+b/c"));
        var cut = Render<SharedSummaryPage>(p => p.Add(c => c.Token, "a+b/c"));
        Assert.Equal(study.Name, cut.Find("h1").TextContent);
        Assert.Contains("works until 2026-12-14 08:15 UTC", cut.Find(".shared-note").TextContent, StringComparison.Ordinal);
        Assert.Equal("api/studies/1/report?link=a%2Bb%2Fc", cut.Find("#download-report").GetAttribute("href"));
        Assert.Empty(cut.FindAll(".study-nav"));
        Assert.Empty(cut.FindAll("[aria-label='Top candidates'] h2 a")); // no way into the member pages
        Assert.Contains("licensed engineering practice", cut.Find(".caution-note").TextContent, StringComparison.Ordinal);
    }

    [Fact]
    public async Task A_link_revoked_while_open_is_refused_at_the_next_change_and_every_minute_anyway()
    {
        var (study, runs) = SampleAnalysis.HeatSink(role: StudyRole.Viewer);
        Shared.Answer = Outcome<SharedSummary>.Ok(new SharedSummary(study, SampleAnalysis.Snapshot(study, runs), SampleAnalysis.At.AddDays(14), "t"));
        var cut = Render<SharedSummaryPage>(p => p.Add(c => c.Token, "t"));

        Shared.Answer = Outcome<SharedSummary>.Forbidden("This share link was revoked on 2026-11-30 09:00 UTC. Ask the study's lead for a new one.");
        await Shared.ChangeAsync();
        cut.WaitForAssertion(() => Assert.Contains("This share link was revoked on 2026-11-30 09:00 UTC.", cut.Find(".shared-refused").TextContent, StringComparison.Ordinal));
        Assert.Empty(cut.FindAll("table.candidates"));

        var expiring = Render<SharedSummaryPage>(p => p.Add(c => c.Token, "u"));
        var opened = Shared.Opened.Count;
        Clock.Advance(TimeSpan.FromMinutes(1));
        expiring.WaitForAssertion(() => Assert.True(Shared.Opened.Count > opened, "The page did not check its link again after a minute."));
    }

    [Fact]
    public void While_a_share_link_opens_it_says_so()
    {
        var cut = Render<SharedSummaryPage>(p => p.Add(c => c.Token, "t"));
        Assert.Contains("Opening the shared summary", cut.Markup, StringComparison.Ordinal);
    }
}
