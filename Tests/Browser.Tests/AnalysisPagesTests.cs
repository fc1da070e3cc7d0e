using System.Net;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text.Json;
using System.Text.RegularExpressions;
using Microsoft.EntityFrameworkCore;
using Microsoft.Playwright;
using Runfold.Browser.Tests.Infrastructure;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Shared.Studies;
using Runfold.Tests.Samples;

namespace Runfold.Browser.Tests;

/// <summary>The analysis pages, the summary and a share link in Chromium against the real server process, on stored
/// analysis snapshots (invented sample snapshots written into the server's store, as the live analysis would write
/// them). Charts must draw under the content security policy; screenshots at a desktop and a tablet width.</summary>
public sealed class AnalysisPagesTests : IAsyncLifetime
{
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
        var runs = (await _admin.GetFromJsonAsync<List<RunDto>>($"/api/studies/{id}/runs", RunfoldJson.Options))!;

        var options = new DbContextOptionsBuilder<SqliteRunfoldDbContext>();
        StorageServiceCollectionExtensions.ConfigureSqlite(options, $"Data Source={Path.Combine(_server.DataFolder, "runfold.db")}");
        await using var db = new SqliteRunfoldDbContext(options.Options);
        var now = DateTimeOffset.UtcNow;
        var history = SampleAnalysis.History(_study, runs);
        foreach (var snapshot in history)
        {
            var stored = snapshot with { ComputedAt = now.AddMinutes(-20 * (history.Count - snapshot.Version)) - TimeSpan.FromSeconds(40) };
            db.AnalysisSnapshots.Add(new AnalysisSnapshot
            {
                StudyId = id, Version = stored.Version, ResultSetVersion = stored.ResultSetVersion, BasedOnRuns = stored.BasedOnRuns,
                ComputedAt = stored.ComputedAt, PayloadJson = JsonSerializer.Serialize(stored, RunfoldJson.Options),
            });
        }
        await db.SaveChangesAsync();
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

    private async Task<IPage> SignedInAsync(int width, int height, List<string> problems)
    {
        var person = await _chromium.Browser.NewContextAsync(new BrowserNewContextOptions { ViewportSize = new ViewportSize { Width = width, Height = height } });
        var page = await person.NewPageAsync();
        page.Console += (_, m) => { if (m.Type is "error" or "warning") problems.Add(m.Text); };
        page.PageError += (_, e) => problems.Add(e);
        await page.GotoAsync(new Uri(_server.Address, "/signin").ToString());
        await page.FillAsync("#token", ServerProcess.AdminToken);
        await page.ClickAsync("button[type=submit]");
        await Assertions.Expect(page.Locator("h1")).ToHaveTextAsync("Studies");
        return page;
    }
}
