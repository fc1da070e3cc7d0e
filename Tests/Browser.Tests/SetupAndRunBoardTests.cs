using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text;
using Microsoft.Playwright;
using Runfold.Browser.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Browser.Tests;

/// <summary>The set-up page and the run board in Chromium against the real server process: a lead creates a study
/// from the preview; two analysts in two browser contexts claim and post (form and CSV file) and each sees the
/// other's progress without a reload; a 10,000-run board scrolls and is driven by keyboard.</summary>
public sealed class SetupAndRunBoardTests : IAsyncLifetime
{
    private const string Password = "Heat-sink-2026";
    private ServerProcess _server = null!;
    private ChromiumBrowser _chromium = null!;
    private HttpClient _admin = null!;

    public async Task InitializeAsync()
    {
        _server = await ServerProcess.StartAsync();
        _chromium = await ChromiumBrowser.LaunchAsync();
        _admin = new HttpClient { BaseAddress = _server.Address, Timeout = TimeSpan.FromMinutes(2) };
        _admin.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", ServerProcess.AdminToken);
    }

    public async Task DisposeAsync()
    {
        _admin.Dispose();
        await _chromium.DisposeAsync();
        await _server.DisposeAsync();
    }

    private static void Ok(HttpResponseMessage response) =>
        Assert.True(response.IsSuccessStatusCode, $"{(int)response.StatusCode} {response.Content.ReadAsStringAsync().Result}");

    private static void Watch(IPage page, List<string> problems)
    {
        page.Console += (_, m) => { if (ChromiumBrowser.IsProblem(m)) problems.Add(m.Text); };
        page.PageError += (_, e) => problems.Add(e);
    }

    private async Task<IPage> AsAdminAsync(List<string> problems)
    {
        var page = await (await _chromium.NewPersonAsync()).NewPageAsync();
        Watch(page, problems);
        await page.GotoAsync(new Uri(_server.Address, "/signin").ToString());
        await page.FillAsync("#token", ServerProcess.AdminToken);
        await page.ClickAsync("#token-signin");
        await Assertions.Expect(page.Locator("h1")).ToHaveTextAsync("Studies");
        return page;
    }

    private async Task<IPage> AsAnalystAsync(string userName, List<string> problems)
    {
        var page = await (await _chromium.NewPersonAsync()).NewPageAsync();
        Watch(page, problems);
        await page.GotoAsync(new Uri(_server.Address, "/signin").ToString());
        await page.FillAsync("#userName", userName);
        await page.FillAsync("#password", Password);
        await page.ClickAsync("#password-signin");
        await Assertions.Expect(page.Locator("h1")).ToHaveTextAsync("Studies");
        return page;
    }

    private async Task<StudyDetail> CreateStudyAsync(CreateStudyRequest request)
    {
        var created = await _admin.PostAsJsonAsync("/api/studies", request, RunfoldJson.Options);
        Ok(created);
        return (await created.Content.ReadFromJsonAsync<StudyDetail>(RunfoldJson.Options))!;
    }

    [Fact]
    public async Task A_lead_creates_a_study_on_the_set_up_page_from_its_preview()
    {
        var problems = new List<string>();
        var page = await AsAdminAsync(problems);
        await ChromiumBrowser.WaitUntilLiveAsync(page);
        await ChromiumBrowser.ScreenshotAsync(page, "studies-list");
        await page.ClickAsync("#new-study");
        await Assertions.Expect(page.Locator("h1")).ToHaveTextAsync("New study");
        await ChromiumBrowser.WaitUntilLiveAsync(page);
        await Assertions.Expect(page.Locator("#preview-runs")).ToHaveTextAsync("40");
        // plotly drew it (its 3.7 MB script is loaded on first use: slow on a busy machine)
        await Assertions.Expect(page.Locator(".scatter-matrix .main-svg").First).ToBeAttachedAsync(new() { Timeout = 30_000 });

        await page.FillAsync("#name", "Heat sink, wider fins");
        await page.FillAsync("#design\\.runs", "12");
        await Assertions.Expect(page.Locator("#preview-runs")).ToHaveTextAsync("12");
        await page.FillAsync("#factors\\[1\\]\\.low", "abc");
        await Assertions.Expect(page.Locator("[data-field='factors[1].low']")).ToContainTextAsync("'abc' is not a number");
        await page.FillAsync("#factors\\[1\\]\\.low", "1.0");
        await page.FillAsync("#design\\.constraints", "fin_count * fin_thickness <= 60");
        await Assertions.Expect(page.Locator("#preview-runs")).ToHaveTextAsync("12");
        await Assertions.Expect(page.Locator("[data-field='factors[1].low']")).ToHaveCountAsync(0);
        await ChromiumBrowser.ScreenshotAsync(page, "study-setup");
        await page.SetViewportSizeAsync(820, 1180);
        await ChromiumBrowser.ScreenshotAsync(page, "study-setup-tablet");
        await page.SetViewportSizeAsync(1280, 800);

        await page.ClickAsync("#create-study");
        await Assertions.Expect(page.Locator("h1")).ToHaveTextAsync("Heat sink, wider fins");
        Assert.Matches(@"/studies/\d+$", page.Url);
        await Assertions.Expect(page.Locator(".state-bar").First).ToHaveAttributeAsync("aria-label", "0 of 12 runs done, 0 claimed, 0 failed, 12 open");
        await ChromiumBrowser.ScreenshotAsync(page, "study-created");
        Assert.True(problems.Count == 0, "The browser reported problems:\n" + string.Join("\n", problems));
    }

    [Fact]
    public async Task Two_analysts_claim_and_post_by_form_and_by_file_and_each_sees_the_others_progress_live()
    {
        var study = await CreateStudyAsync(new CreateStudyRequest("Two analysts",
            [new FactorSpec("fin_height", FactorKind.Continuous, 20, 60, Unit: "mm"), new FactorSpec("air_velocity", FactorKind.Continuous, 1, 6, Unit: "m/s")],
            [new ResponseSpec("thermal_resistance", ResponseGoal.Minimize, Unit: "K/W"), new ResponseSpec("mass", ResponseGoal.Minimize, Unit: "g")],
            new DesignSpec(DesignMethod.FullFactorial, Levels: [3, 2])));
        foreach (var name in new[] { "ana", "ben" })
        {
            Ok(await _admin.PostAsJsonAsync("/api/users", new CreateUserRequest(name, name.ToUpperInvariant(), Password), RunfoldJson.Options));
            Ok(await _admin.PutAsJsonAsync($"/api/studies/{study.Id}/members/{name}", new MemberRoleRequest(StudyRole.Analyst), RunfoldJson.Options));
        }
        var problems = new List<string>();
        var ana = await AsAnalystAsync("ana", problems);
        var ben = await AsAnalystAsync("ben", problems);
        var board = new Uri(_server.Address, $"/studies/{study.Id}/runs").ToString();
        foreach (var page in new[] { ana, ben })
        {
            await page.GotoAsync(board);
            await ChromiumBrowser.WaitUntilLiveAsync(page);
        }

        await ana.FillAsync("#claim-count", "2");
        await ana.ClickAsync("#claim");
        await Assertions.Expect(ana.Locator(".notice-ok")).ToContainTextAsync("You claimed run 1, 2.");
        var anaOnBens = ben.Locator("table.analysts tbody tr", new PageLocatorOptions { HasText = "ana" });
        await Assertions.Expect(anaOnBens.Locator("td").Nth(1)).ToHaveTextAsync("2"); // claimed, seen without a reload

        await ben.ClickAsync("#claim");
        await Assertions.Expect(ben.Locator(".notice-ok")).ToContainTextAsync("You claimed run 3.");

        await ana.Locator("table.mine tbody tr").First.GetByText("Enter result").ClickAsync();
        await ana.FillAsync("#value-thermal_resistance", "0.42");
        await ana.FillAsync("#value-mass", "118");
        await ana.ClickAsync("#submit-result");
        await Assertions.Expect(ana.Locator(".notice-ok")).ToContainTextAsync("Stored revision 1 of run 1 (done)");

        await ben.SetInputFilesAsync("#results-file", new FilePayload
        {
            Name = "results.csv", MimeType = "text/csv",
            Buffer = Encoding.UTF8.GetBytes("run,thermal_resistance [K/W],mass [g]\n3,0.51,96.5\n"),
        });
        await Assertions.Expect(ben.Locator("#upload-report")).ToContainTextAsync("Stored 1 result");

        var benOnAnas = ana.Locator("table.analysts tbody tr", new PageLocatorOptions { HasText = "ben" });
        await Assertions.Expect(benOnAnas.Locator("td").First).ToHaveTextAsync("1"); // done, seen without a reload
        await Assertions.Expect(ana.Locator(".state-bar").First).ToHaveAttributeAsync("aria-label", "2 of 6 runs done, 1 claimed, 0 failed, 3 open");
        var anaRowOnBens = ben.Locator("table.analysts tbody tr", new PageLocatorOptions { HasText = "ana" });
        await Assertions.Expect(anaRowOnBens.Locator("td").First).ToHaveTextAsync("1");

        await ana.CheckAsync("#filter-mine");
        await Assertions.Expect(ana.Locator("#filter-count")).ToHaveTextAsync("2 of 6 runs");
        await ChromiumBrowser.ScreenshotAsync(ana, "run-board-two-analysts");
        await ChromiumBrowser.ScreenshotAsync(ben, "run-board-after-upload");
        await ben.SetViewportSizeAsync(820, 1180);
        await ChromiumBrowser.ScreenshotAsync(ben, "run-board-tablet");
        Assert.True(problems.Count == 0, "The browser reported problems:\n" + string.Join("\n", problems));
    }

    [Fact]
    public async Task A_board_of_10000_runs_scrolls_to_its_end_and_is_driven_by_keyboard()
    {
        var study = await CreateStudyAsync(new CreateStudyRequest("Ten thousand runs",
            [
                new FactorSpec("fin_height", FactorKind.Continuous, 20, 60, Unit: "mm"), new FactorSpec("fin_thickness", FactorKind.Continuous, 0.8, 2.5, Unit: "mm"),
                new FactorSpec("fin_count", FactorKind.Integer, 10, 40), new FactorSpec("air_velocity", FactorKind.Continuous, 1, 6, Unit: "m/s"),
            ],
            [new ResponseSpec("thermal_resistance", ResponseGoal.Minimize, Unit: "K/W")],
            new DesignSpec(DesignMethod.Sobol, Runs: 10_000, Scramble: true)));
        Assert.Equal(10_000, study.Counts.Total);
        var problems = new List<string>();
        var page = await AsAdminAsync(problems);
        await page.GotoAsync(new Uri(_server.Address, $"/studies/{study.Id}/runs").ToString());
        await ChromiumBrowser.WaitUntilLiveAsync(page);
        await Assertions.Expect(page.Locator("#filter-count")).ToHaveTextAsync("10,000 of 10,000 runs");
        var grid = page.Locator(".grid-scroll");
        await Assertions.Expect(grid.Locator("button.run-open").First).ToHaveTextAsync("1");
        // Only the rows in view are in the page, not 10,000.
        Assert.True(await grid.Locator("tbody tr").CountAsync() < 100, "The run table rendered every row instead of the visible window.");

        foreach (var fraction in new[] { 0.25, 0.5, 0.75, 1.0 })
        {
            await grid.EvaluateAsync("(e, f) => { e.scrollTop = (e.scrollHeight - e.clientHeight) * f; }", fraction);
            // A run a few rows below the window's top edge (rows are 34 px, about 15 in view) is rendered once the
            // virtualised table has caught up with the scroll.
            var inView = (int)Math.Round(fraction * 9_990) + 3;
            await Assertions.Expect(grid.Locator($"button.run-open[aria-label='Open run {inView}']")).ToBeAttachedAsync();
            Assert.True(await grid.Locator("tbody tr").CountAsync() < 100, "The run table rendered every row instead of the visible window.");
        }
        await Assertions.Expect(grid.Locator("button.run-open[aria-label='Open run 10000']")).ToBeVisibleAsync();
        await ChromiumBrowser.ScreenshotAsync(page, "run-board-10000-end");

        await grid.EvaluateAsync("e => { e.scrollTop = 0; }");
        await Assertions.Expect(grid.Locator("button.run-open").First).ToHaveTextAsync("1");
        await grid.Locator("button.run-open").First.FocusAsync();
        await page.Keyboard.PressAsync("ArrowDown");
        await page.Keyboard.PressAsync("ArrowDown");
        await Assertions.Expect(page.Locator("button.run-open:focus")).ToHaveTextAsync("3");
        await page.Keyboard.PressAsync("Enter");
        await Assertions.Expect(page.Locator(".run-history h3")).ToContainTextAsync("Run 3");
        await ChromiumBrowser.ScreenshotAsync(page, "run-board-10000-keyboard");
        Assert.True(problems.Count == 0, "The browser reported problems:\n" + string.Join("\n", problems));
    }
}
