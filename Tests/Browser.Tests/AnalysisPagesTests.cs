using System.Net;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json;
using System.Text.RegularExpressions;
using Microsoft.Playwright;
using Runfold.Browser.Tests.Infrastructure;
using Runfold.Server.Demo;
using Runfold.Shared.Studies;

namespace Runfold.Browser.Tests;

/// <summary>The analysis pages, the summary and a share link in Chromium against the real server process, on the
/// live analysis of the seeded demo: its first snapshot (computed at start-up) and a second one after one more result
/// is posted over the API, computed from the heat-sink estimate as a cluster job would, so the convergence view has
/// a history. Charts must draw under the content security policy; screenshots at a desktop and a tablet width.</summary>
public sealed class AnalysisPagesTests : IAsyncLifetime
{
    private static readonly TimeSpan SnapshotWait = TimeSpan.FromSeconds(120);
    private ServerProcess _server = null!;
    private ChromiumBrowser _chromium = null!;
    private HttpClient _admin = null!;
    private StudyDetail _study = null!;

    public async Task InitializeAsync()
    {
        _server = await ServerProcess.StartAsync();
        _chromium = await ChromiumBrowser.LaunchAsync();
        _admin = new HttpClient { BaseAddress = _server.Address };
        _admin.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", ServerProcess.AdminToken);
        var id = (await _admin.GetFromJsonAsync<List<StudySummary>>("/api/studies", RunfoldJson.Options))!.Single().Id;
        _study = (await _admin.GetFromJsonAsync<StudyDetail>($"/api/studies/{id}", RunfoldJson.Options))!;

        var first = await WaitForSnapshotAsync(id, s => true);
        var claimed = await Ok<List<RunDto>>(await _admin.PostAsJsonAsync($"/api/studies/{id}/claims", new ClaimRequest(1), RunfoldJson.Options));
        var run = Assert.Single(claimed);
        var performance = HeatSinkEstimate.Evaluate(DemoStudy.Design(run.Factors));
        var result = new ResultRequest(RunState.Done,
            DemoStudy.Results(performance).ToDictionary(v => v.Key, v => JsonSerializer.SerializeToElement(v.Value)),
            DemoStudy.Note(performance), SolverSeconds: 5400);
        await Ok<ResultReceipt>(await _admin.PutAsJsonAsync($"/api/runs/{run.Id}/result", result, RunfoldJson.Options));
        await WaitForSnapshotAsync(id, s => s.Version > first.Version && s.BasedOnRuns == first.BasedOnRuns + 1);
    }

    /// <summary>Polls the analysis API until the latest snapshot meets <paramref name="ready"/>.</summary>
    private async Task<AnalysisSnapshotDto> WaitForSnapshotAsync(int studyId, Func<AnalysisSnapshotDto, bool> ready)
    {
        var clock = System.Diagnostics.Stopwatch.StartNew();
        AnalysisSnapshotDto? latest = null;
        while (clock.Elapsed < SnapshotWait)
        {
            using var answer = await _admin.GetAsync($"/api/studies/{studyId}/analysis");
            if (answer.StatusCode == HttpStatusCode.OK)
            {
                latest = (await answer.Content.ReadFromJsonAsync<AnalysisSnapshotDto>(RunfoldJson.Options))!;
                if (ready(latest)) return latest;
            }
            else Assert.Equal(HttpStatusCode.NotFound, answer.StatusCode);
            await Task.Delay(250);
        }
        throw new TimeoutException($"The live analysis gave no fitting snapshot within {SnapshotWait.TotalSeconds} s; the latest was " +
                                   (latest is null ? "none." : $"version {latest.Version} on {latest.BasedOnRuns} runs."));
    }

    private static async Task<T> Ok<T>(HttpResponseMessage response)
    {
        Assert.True(response.IsSuccessStatusCode, $"{(int)response.StatusCode} {await response.Content.ReadAsStringAsync()}");
        return (await response.Content.ReadFromJsonAsync<T>(RunfoldJson.Options))!;
    }

    public async Task DisposeAsync()
    {
        _admin.Dispose();
        await _chromium.DisposeAsync();
        await _server.DisposeAsync();
    }

    [Theory]
    [InlineData(1280, 800)]
    [InlineData(820, 1180)]
    public async Task Every_analysis_page_draws_its_charts_within_the_content_security_policy(int width, int height)
    {
        var problems = new List<string>();
        var page = await SignedInAsync(width, height, problems);
        foreach (var (path, heading) in new[]
                 {
                     ("model", "Fit check"), ("sensitivity", "Across responses"), ("candidates", "Ranked candidates"),
                     ("convergence", "Best candidate"), ("summary", "Top candidates"),
                 })
        {
            await page.GotoAsync(new Uri(_server.Address, $"/studies/{_study.Id}/{path}").ToString());
            await ChromiumBrowser.WaitUntilLiveAsync(page);
            await Assertions.Expect(page.Locator("h2", new() { HasText = heading }).First).ToBeVisibleAsync();
            await Assertions.Expect(page.Locator(".snapshot-status")).ToContainTextAsync(new Regex(@"Analysis \d+"));
            await Assertions.Expect(page.Locator(".js-plotly-plot").First).ToBeAttachedAsync(new() { Timeout = 20_000 });
            // Every chart of the page drawn (Plotly's own SVG in it), not just the first.
            await page.WaitForFunctionAsync("() => [...document.querySelectorAll('figure.analysis-chart')].every(f => f.querySelector('.js-plotly-plot .main-svg'))",
                null, new PageWaitForFunctionOptions { Timeout = 30_000 });
            await Assertions.Expect(page.Locator(".chart-failed")).ToHaveCountAsync(0);
            await page.WaitForTimeoutAsync(600); // let Plotly finish its transitions before the picture
            await ChromiumBrowser.ScreenshotAsync(page, $"analysis-{path}-{width}");
        }
        await Assertions.Expect(page.Locator(".caution-note")).ToContainTextAsync("licensed engineering practice");
        Assert.True(problems.Count == 0, "The browser reported problems:\n" + string.Join("\n", problems));
    }

    [Fact]
    public async Task A_share_link_opens_the_summary_without_an_account_and_stops_at_once_when_revoked()
    {
        var problems = new List<string>();
        var lead = await SignedInAsync(1280, 800, problems);
        await lead.GotoAsync(new Uri(_server.Address, $"/studies/{_study.Id}/summary").ToString());
        await ChromiumBrowser.WaitUntilLiveAsync(lead);
        await lead.FillAsync("#share-note", "design review <board>");
        await lead.ClickAsync("#create-share-link");
        var url = lead.Locator("input.share-url").First;
        await Assertions.Expect(url).ToHaveValueAsync(new Regex("/shared/"));
        await Assertions.Expect(lead.Locator(".pareto .js-plotly-plot")).ToBeAttachedAsync(new() { Timeout = 20_000 });
        var link = await url.InputValueAsync();
        await Assertions.Expect(lead.Locator(".share-link-list")).ToContainTextAsync("design review <board>");
        await ChromiumBrowser.ScreenshotAsync(lead, "summary-with-share-links-1280");

        await using var stranger = await _chromium.NewPersonAsync();
        var shared = await stranger.NewPageAsync();
        shared.Console += (_, m) => { if (m.Type is "error") problems.Add(m.Text); };
        await shared.GotoAsync(link);
        await ChromiumBrowser.WaitUntilLiveAsync(shared);
        await Assertions.Expect(shared.Locator("h1")).ToHaveTextAsync(_study.Name);
        await Assertions.Expect(shared.Locator("table.candidates tbody tr")).ToHaveCountAsync(5);
        await Assertions.Expect(shared.Locator(".study-nav")).ToHaveCountAsync(0);
        await Assertions.Expect(shared.Locator(".pareto .js-plotly-plot")).ToBeAttachedAsync(new() { Timeout = 20_000 });
        await shared.WaitForTimeoutAsync(600);
        await Assertions.Expect(shared.Locator("text=Sign out")).ToHaveCountAsync(0);
        await ChromiumBrowser.ScreenshotAsync(shared, "shared-summary-1280");

        var report = await shared.Locator("#download-report").GetAttributeAsync("href");
        using (var anonymous = new HttpClient { BaseAddress = _server.Address })
        {
            var answer = await anonymous.GetAsync(report);
            Assert.Equal(HttpStatusCode.OK, answer.StatusCode);
            Assert.Contains(_study.Name, await answer.Content.ReadAsStringAsync(), StringComparison.Ordinal);
        }

        await lead.ClickAsync(".share-link-list button:has-text('Revoke')");
        // The open page is told the study changed, checks its link again and says so, without a reload.
        await Assertions.Expect(shared.Locator(".shared-refused")).ToContainTextAsync("revoked");
        await ChromiumBrowser.ScreenshotAsync(shared, "shared-summary-revoked-1280");
        await shared.ReloadAsync();
        await Assertions.Expect(shared.Locator(".shared-refused")).ToContainTextAsync("This share link was revoked");
        Assert.True(problems.Count == 0, "The browser reported problems:\n" + string.Join("\n", problems));
    }

    [Fact]
    public async Task A_viewer_watches_a_candidate_get_verified_and_the_lead_add_a_next_wave_without_a_reload()
    {
        const string password = "Heat-sink-2026";
        await Ok<object>(await _admin.PostAsJsonAsync("/api/users", new CreateUserRequest("vik", "Vik", password), RunfoldJson.Options));
        await Ok<object>(await _admin.PutAsJsonAsync($"/api/studies/{_study.Id}/members/vik", new MemberRoleRequest(StudyRole.Viewer), RunfoldJson.Options));
        var problems = new List<string>();
        var candidatesPage = new Uri(_server.Address, $"/studies/{_study.Id}/candidates").ToString();
        var viewer = await _chromium.SignInAsync(_server.Address, "vik", password, problems);
        await viewer.GotoAsync(candidatesPage);
        await ChromiumBrowser.WaitUntilLiveAsync(viewer);
        await Assertions.Expect(viewer.Locator("table.candidates tbody tr").First).ToContainTextAsync("unverified");
        await Assertions.Expect(viewer.Locator(".next-wave")).ToHaveCountAsync(0);
        viewer.Load += (_, _) => problems.Add("the viewer's page was loaded again");

        // The lead verifies the best candidate from the page.
        var lead = await SignedInAsync(1280, 800, problems);
        await lead.GotoAsync(candidatesPage);
        await ChromiumBrowser.WaitUntilLiveAsync(lead);
        await lead.ClickAsync("#verify-candidate");
        await lead.ClickAsync("#confirm-verify");
        var notice = lead.Locator("section.panel ~ .notice-ok").First;
        await Assertions.Expect(notice).ToContainTextAsync("will verify candidate 1");
        var runNumber = int.Parse(Regex.Match(await notice.InnerTextAsync(), @"Run (\d+)").Groups[1].Value, System.Globalization.CultureInfo.InvariantCulture);
        await Assertions.Expect(viewer.Locator("table.candidates .badge-verifying")).ToHaveCountAsync(1, new() { Timeout = 60_000 });

        // The solver's result comes in over the API, as a cluster job would post it.
        var run = (await _admin.GetFromJsonAsync<List<RunDto>>($"/api/studies/{_study.Id}/runs?state=open", RunfoldJson.Options))!.Single(r => r.Number == runNumber);
        var performance = HeatSinkEstimate.Evaluate(DemoStudy.Design(run.Factors));
        await Ok<ResultReceipt>(await _admin.PutAsJsonAsync($"/api/runs/{run.Id}/result", new ResultRequest(RunState.Done,
            DemoStudy.Results(performance).ToDictionary(v => v.Key, v => JsonSerializer.SerializeToElement(v.Value)), DemoStudy.Note(performance), 5100),
            RunfoldJson.Options));
        await Assertions.Expect(viewer.Locator(".verification tbody tr")).ToHaveCountAsync(_study.Responses.Count, new() { Timeout = 60_000 });
        await Assertions.Expect(viewer.Locator("table.candidates .badge-verified, table.candidates .badge-disagrees")).ToHaveCountAsync(1);
        await Assertions.Expect(viewer.Locator(".verification")).ToContainTextAsync($"{runNumber}");
        await viewer.Locator(".verification").ScrollIntoViewIfNeededAsync();
        await ChromiumBrowser.ScreenshotAsync(viewer, "candidates-verified-viewer-1280");

        // The lead asks for four runs where a better design is likely; the viewer's run count follows.
        await lead.ClickAsync("#add-wave");
        await Assertions.Expect(lead.Locator(".next-wave .notice-ok")).ToContainTextAsync("were added as wave", new() { Timeout = 60_000 });
        await lead.Locator(".next-wave").ScrollIntoViewIfNeededAsync();
        await ChromiumBrowser.ScreenshotAsync(lead, "candidates-next-wave-lead-1280");
        var total = _study.Counts.Total + 1 + 4;
        await Assertions.Expect(viewer.Locator(".snapshot-status")).ToContainTextAsync($"of {total} runs", new() { Timeout = 60_000 });
        Assert.True(problems.Count == 0, "The browser reported problems:\n" + string.Join("\n", problems));
    }

    private async Task<IPage> SignedInAsync(int width, int height, List<string> problems)
    {
        var person = await _chromium.Browser.NewContextAsync(new BrowserNewContextOptions { ViewportSize = new ViewportSize { Width = width, Height = height } });
        var page = await person.NewPageAsync();
        page.Console += (_, m) => { if (ChromiumBrowser.IsProblem(m)) problems.Add(m.Text); };
        page.PageError += (_, e) => problems.Add(e);
        await page.GotoAsync(new Uri(_server.Address, "/signin").ToString());
        await page.FillAsync("#token", ServerProcess.AdminToken);
        await page.ClickAsync("button[type=submit]");
        await Assertions.Expect(page.Locator("h1")).ToHaveTextAsync("Studies");
        return page;
    }
}
