using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Text;
using Microsoft.Playwright;
using Runfold.Browser.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Browser.Tests;

/// <summary>An analyst's day in Chromium against the real server process: password sign-in, claim a run, post
/// its result, see it in the activity feed, create an API token; and markup in names and notes stays text.</summary>
public sealed class RunBoardPageTests : IAsyncLifetime
{
    private const string Password = "Heat-sink-2026";
    private const string ScriptName = "<script>alert('name')</script> fin trial";
    private const string ImgNote = "<img src=x onerror=alert('note')> mesh failed";
    private ServerProcess _server = null!;
    private ChromiumBrowser _chromium = null!;
    private HttpClient _admin = null!;
    private int _demoId;
    private int _scriptId;
    private int _firstOpen;

    public async Task InitializeAsync()
    {
        _server = await ServerProcess.StartAsync();
        _chromium = await ChromiumBrowser.LaunchAsync();
        _admin = new HttpClient { BaseAddress = _server.Address };
        _admin.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", ServerProcess.AdminToken);
        _demoId = (await _admin.GetFromJsonAsync<List<StudySummary>>("/api/studies", RunfoldJson.Options))!.Single().Id;
        // The seeded demo has most runs done already: the analyst's claim takes the lowest-numbered open one.
        _firstOpen = (await _admin.GetFromJsonAsync<List<RunDto>>($"/api/studies/{_demoId}/runs?state=open", RunfoldJson.Options))!.Min(r => r.Number);
        Ok(await _admin.PostAsJsonAsync("/api/users", new CreateUserRequest("ana", "Ana Ruiz", Password), RunfoldJson.Options));
        Ok(await _admin.PutAsJsonAsync($"/api/studies/{_demoId}/members/ana", new MemberRoleRequest(StudyRole.Analyst), RunfoldJson.Options));

        var created = await _admin.PostAsJsonAsync("/api/studies", new CreateStudyRequest(ScriptName,
            [new FactorSpec("fin_height", FactorKind.Continuous, 20, 60, Unit: "mm")],
            [new ResponseSpec("thermal_resistance", ResponseGoal.Minimize, Unit: "K/W")],
            new DesignSpec(DesignMethod.FullFactorial, Levels: [2])), RunfoldJson.Options);
        Ok(created);
        var study = (await created.Content.ReadFromJsonAsync<StudyDetail>(RunfoldJson.Options))!;
        _scriptId = study.Id;
        Ok(await _admin.PutAsJsonAsync($"/api/studies/{_scriptId}/members/ana", new MemberRoleRequest(StudyRole.Analyst), RunfoldJson.Options));
        var failed = new HttpRequestMessage(HttpMethod.Put, $"/api/runs/{study.Runs![0].Id}/result")
        {
            Content = new StringContent($$"""{"state":"failed","note":"{{ImgNote}}"}""", Encoding.UTF8, "application/json"),
        };
        Ok(await _admin.SendAsync(failed));
    }

    public async Task DisposeAsync()
    {
        _admin.Dispose();
        await _chromium.DisposeAsync();
        await _server.DisposeAsync();
    }

    private static void Ok(HttpResponseMessage response) =>
        Assert.True(response.IsSuccessStatusCode, $"{(int)response.StatusCode} {response.Content.ReadAsStringAsync().Result}");

    private Task<IPage> SignedInAsync(List<string> problems) => _chromium.SignInAsync(_server.Address, "ana", Password, problems);

    [Fact]
    public async Task An_analyst_signs_in_with_a_password_claims_a_run_posts_its_result_and_sees_it_in_the_activity()
    {
        var problems = new List<string>();
        var page = await SignedInAsync(problems);
        await page.GotoAsync(new Uri(_server.Address, $"/studies/{_demoId}/runs").ToString());
        await ChromiumBrowser.WaitUntilLiveAsync(page);
        await page.ClickAsync("#claim");
        await Assertions.Expect(page.Locator(".notice-ok")).ToContainTextAsync($"You claimed run {_firstOpen}.");
        var mine = page.Locator("table.mine tbody tr");
        await Assertions.Expect(mine).ToHaveCountAsync(1);
        await mine.GetByText("Enter result").ClickAsync();
        await page.FillAsync("#value-thermal_resistance", "0.42");
        await page.FillAsync("#value-pressure_drop", "31.5");
        await page.FillAsync("#value-mass", "118");
        await ChromiumBrowser.ScreenshotAsync(page, "run-board-result-form");
        await page.ClickAsync("#submit-result");
        await Assertions.Expect(page.Locator(".notice-ok")).ToContainTextAsync($"Stored revision 1 of run {_firstOpen} (done)");
        await Assertions.Expect(page.Locator("table.mine tbody tr")).ToHaveCountAsync(0);
        await ChromiumBrowser.ScreenshotAsync(page, "run-board");

        await page.ClickAsync(".study-nav >> text=Activity");
        await Assertions.Expect(page.Locator(".activity-item").First).ToContainTextAsync($"ana stored the result of run {_firstOpen} (revision 1)");
        await Assertions.Expect(page.Locator(".activity-item").First.Locator(".via")).ToHaveTextAsync("via UI");
        await ChromiumBrowser.ScreenshotAsync(page, "activity-feed");

        await page.GotoAsync(new Uri(_server.Address, "/account").ToString());
        await ChromiumBrowser.WaitUntilLiveAsync(page);
        await page.FillAsync("#token-name", "cluster jobs");
        await page.ClickAsync("#create-token");
        var secret = page.Locator("#new-token code.secret");
        await Assertions.Expect(secret).ToContainTextAsync("rf_");
        var token = await secret.TextContentAsync();
        using var cluster = new HttpClient { BaseAddress = _server.Address };
        cluster.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", token);
        Assert.True((await cluster.GetAsync("/api/studies")).IsSuccessStatusCode, "The token from the account page works for scripts.");
        await ChromiumBrowser.ScreenshotAsync(page, "account-tokens");
        Assert.True(problems.Count == 0, "The browser reported problems:\n" + string.Join("\n", problems));
    }

    [Fact]
    public async Task Markup_in_a_study_name_and_a_note_is_shown_as_text()
    {
        var problems = new List<string>();
        var page = await SignedInAsync(problems);
        await Assertions.Expect(page.Locator(".study-card a.study-name", new PageLocatorOptions { HasText = "fin trial" })).ToHaveTextAsync(ScriptName);
        await page.GotoAsync(new Uri(_server.Address, $"/studies/{_scriptId}").ToString());
        await Assertions.Expect(page.Locator("h1")).ToHaveTextAsync(ScriptName);
        await page.GotoAsync(new Uri(_server.Address, $"/studies/{_scriptId}/activity").ToString());
        await Assertions.Expect(page.Locator(".activity-item").First).ToContainTextAsync(ImgNote);
        Assert.Equal(0, await page.Locator(".activity img").CountAsync());
        await ChromiumBrowser.ScreenshotAsync(page, "markup-as-text");
        Assert.True(problems.Count == 0, "The browser reported problems (a dialog means a script ran):\n" + string.Join("\n", problems));
    }
}
