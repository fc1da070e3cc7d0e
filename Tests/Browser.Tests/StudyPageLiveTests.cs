using System.Net.Http.Headers;
using System.Net.Http.Json;
using Microsoft.Playwright;
using Runfold.Browser.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Browser.Tests;

/// <summary>Two people in two browser contexts: a viewer has the study page open while an analyst posts a result on
/// the run board; the viewer's page shows the new run count and the new analysis snapshot without a reload.</summary>
public sealed class StudyPageLiveTests : IAsyncLifetime
{
    private const string Password = "Heat-sink-2026";
    private ServerProcess _server = null!;
    private ChromiumBrowser _chromium = null!;
    private int _demoId;
    private RunCounts _counts = RunCounts.Empty;

    public async Task InitializeAsync()
    {
        _server = await ServerProcess.StartAsync();
        _chromium = await ChromiumBrowser.LaunchAsync();
        using var admin = new HttpClient { BaseAddress = _server.Address };
        admin.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", ServerProcess.AdminToken);
        var demo = (await admin.GetFromJsonAsync<List<StudySummary>>("/api/studies", RunfoldJson.Options))!.Single();
        (_demoId, _counts) = (demo.Id, demo.Counts);
        foreach (var (name, role) in new[] { ("vik", StudyRole.Viewer), ("ana", StudyRole.Analyst) })
        {
            Ok(await admin.PostAsJsonAsync("/api/users", new CreateUserRequest(name, name.ToUpperInvariant(), Password), RunfoldJson.Options));
            Ok(await admin.PutAsJsonAsync($"/api/studies/{_demoId}/members/{name}", new MemberRoleRequest(role), RunfoldJson.Options));
        }
    }

    public async Task DisposeAsync()
    {
        await _chromium.DisposeAsync();
        await _server.DisposeAsync();
    }

    private static void Ok(HttpResponseMessage response) =>
        Assert.True(response.IsSuccessStatusCode, $"{(int)response.StatusCode} {response.Content.ReadAsStringAsync().Result}");

    [Fact]
    public async Task The_study_page_shows_another_persons_result_and_the_new_snapshot_without_a_reload()
    {
        var problems = new List<string>();
        var viewer = await _chromium.SignInAsync(_server.Address, "vik", Password, problems);
        await viewer.GotoAsync(new Uri(_server.Address, $"/studies/{_demoId}").ToString());
        await ChromiumBrowser.WaitUntilLiveAsync(viewer);
        var done = _counts.Done;
        // The demo's first snapshot is computed at start-up.
        var basis = viewer.Locator(".snapshot-basis");
        await Assertions.Expect(basis).ToContainTextAsync($"Analysis based on {done} of {_counts.Total} runs", new() { Timeout = 60_000 });
        await Assertions.Expect(basis).ToContainTextAsync("1 failed run left out");
        await Assertions.Expect(viewer.Locator(".state-bar")).ToHaveAttributeAsync("aria-label", new System.Text.RegularExpressions.Regex($"^{done} of {_counts.Total} runs done"));
        viewer.Load += (_, _) => problems.Add("the viewer's page was loaded again");

        var analyst = await _chromium.SignInAsync(_server.Address, "ana", Password, problems);
        await analyst.GotoAsync(new Uri(_server.Address, $"/studies/{_demoId}/runs").ToString());
        await ChromiumBrowser.WaitUntilLiveAsync(analyst);
        await analyst.ClickAsync("#claim");
        await Assertions.Expect(analyst.Locator(".notice-ok")).ToContainTextAsync("You claimed run");
        await analyst.Locator("table.mine tbody tr").GetByText("Enter result").ClickAsync();
        await analyst.FillAsync("#value-thermal_resistance", "0.42");
        await analyst.FillAsync("#value-pressure_drop", "31.5");
        await analyst.FillAsync("#value-mass", "118");
        await analyst.ClickAsync("#submit-result");
        await Assertions.Expect(analyst.Locator(".notice-ok")).ToContainTextAsync("Stored revision 1");

        // The viewer's page moves on by itself: the run count at once, the snapshot once it is computed.
        await Assertions.Expect(viewer.Locator(".state-bar")).ToHaveAttributeAsync("aria-label", new System.Text.RegularExpressions.Regex($"^{done + 1} of {_counts.Total} runs done"));
        await Assertions.Expect(basis).ToContainTextAsync($"Analysis based on {done + 1} of {_counts.Total} runs", new() { Timeout = 60_000 });
        await ChromiumBrowser.ScreenshotAsync(viewer, "study-page-live-snapshot");
        Assert.True(problems.Count == 0, "The browser reported problems:\n" + string.Join("\n", problems));
    }
}
