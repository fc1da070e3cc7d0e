using Bunit;
using Microsoft.JSInterop;
using Runfold.Client.Components.Analysis;
using Runfold.Shared.Studies;
using Runfold.Tests.Samples;

namespace Runfold.Client.Tests.Analysis;

/// <summary>The smaller panels without their data, and a chart the browser cannot draw.</summary>
public sealed class PanelStatesTests : AnalysisTestContext
{
    [Fact]
    public void Panels_without_their_data_say_so()
    {
        var (study, snapshot) = Serve();
        var bare = snapshot.Responses[0] with { FitCheck = null, MainEffects = [] };
        Assert.Contains("No cross-validated predictions", Render<FitCheckPanel>(p => p.Add(c => c.Response, bare)).Markup, StringComparison.Ordinal);
        var view = new AnalysisView(study, snapshot, () => Task.CompletedTask);
        Assert.Contains("No main-effect curves", Render<MainEffectsPanel>(p => p.Add(c => c.View, view).Add(c => c.Response, bare)).Markup, StringComparison.Ordinal);
        var single = study with { Responses = [study.Responses[0]] };
        Assert.Contains("A trade-off needs two responses", Render<ParetoPanel>(p => p.Add(c => c.Study, single).Add(c => c.Candidates, snapshot.Candidates)).Markup, StringComparison.Ordinal);
        Assert.Empty(Render<VerificationPanel>(p => p.Add(c => c.Study, study).Add(c => c.Candidates, snapshot.Candidates.Skip(3).ToList())).Nodes);
        Assert.Contains("No sensitivity ranking", Render<SensitivityMatrix>(p => p.Add(c => c.Snapshot, snapshot with { Responses = [bare with { Sensitivity = [] }] })
            .Add(c => c.Responses, study.Responses)).Markup, StringComparison.Ordinal);
    }

    [Fact]
    public void A_chart_the_browser_cannot_draw_says_so_and_leaves_the_page_working()
    {
        var (_, snapshot) = Serve();
        var plotly = JSInterop.SetupModule(i => i.Arguments.Count > 0 && i.Arguments[0] is string path && path.Contains("plotly-interop", StringComparison.Ordinal));
        plotly.Mode = JSRuntimeMode.Loose;
        plotly.SetupVoid("newPlot", _ => true).SetException(new JSException("WebGL is not supported"));
        var cut = Render<FitCheckPanel>(p => p.Add(c => c.Response, snapshot.Responses[0]));
        cut.WaitForAssertion(() => Assert.Equal(2, cut.FindAll(".chart-failed").Count));
        Assert.Contains("could not draw the chart", cut.Find(".chart-failed").TextContent, StringComparison.Ordinal);
        Assert.Contains("leave-one-out", cut.Markup, StringComparison.Ordinal); // the rest of the panel is still there
    }
}
