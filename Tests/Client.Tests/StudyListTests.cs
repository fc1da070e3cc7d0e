using Bunit;
using Runfold.Client.Components;
using Runfold.Shared.Studies;

namespace Runfold.Client.Tests;

public sealed class StudyListTests : BunitContext
{
    [Fact]
    public void While_loading_it_says_so()
    {
        var cut = Render<StudyList>(p => p.Add(c => c.Studies, null));
        Assert.Contains("Loading studies", cut.Markup, StringComparison.Ordinal);
    }

    [Fact]
    public void With_no_studies_it_says_what_to_do_next()
    {
        var cut = Render<StudyList>(p => p.Add(c => c.Studies, []));
        var empty = cut.Find(".empty-state");
        Assert.Contains("No studies yet", empty.TextContent, StringComparison.Ordinal);
        Assert.Contains("The admin creates studies", empty.TextContent, StringComparison.Ordinal);
        Assert.Empty(cut.FindAll(".study-card"));
    }

    [Fact]
    public void Each_study_shows_its_name_link_and_progress_by_state()
    {
        var created = new DateTimeOffset(2026, 11, 2, 9, 0, 0, TimeSpan.Zero);
        var cut = Render<StudyList>(p => p.Add(c => c.Studies,
        [
            new StudySummary(7, "Heat sink <b>v2</b>", new RunCounts(Open: 10, Claimed: 5, Done: 20, Failed: 5), created, null),
            new StudySummary(8, "Empty study", RunCounts.Empty, created, null),
        ]));

        var cards = cut.FindAll(".study-card");
        Assert.Equal(2, cards.Count);
        var link = cards[0].QuerySelector("a.study-name")!;
        Assert.Equal("studies/7", link.GetAttribute("href"));
        Assert.Equal("Heat sink <b>v2</b>", link.TextContent); // a name is text, never markup
        var bar = cards[0].QuerySelector(".state-bar")!;
        Assert.Equal("20 of 40 runs done, 5 claimed, 5 failed, 10 open", bar.GetAttribute("aria-label"));
        Assert.Equal("width:50%", cards[0].QuerySelector(".seg-done")!.GetAttribute("style"));
        Assert.Equal("width:12.5%", cards[0].QuerySelector(".seg-failed")!.GetAttribute("style"));
        Assert.Contains("20 of 40 runs done", cards[0].TextContent, StringComparison.Ordinal);
        Assert.Equal("No runs", cards[1].QuerySelector(".state-bar")!.GetAttribute("aria-label"));
        Assert.Empty(cards[1].QuerySelectorAll(".seg"));
    }
}
