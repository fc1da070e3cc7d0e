using Microsoft.Playwright;
using Runfold.Browser.Tests.Infrastructure;

namespace Runfold.Browser.Tests;

/// <summary>The server as a person starts it (embedded SQLite, demo study), opened in Chromium.</summary>
public sealed class StudiesPageTests : IAsyncLifetime
{
    private ServerProcess _server = null!;
    private ChromiumBrowser _chromium = null!;

    public async Task InitializeAsync()
    {
        _server = await ServerProcess.StartAsync();
        _chromium = await ChromiumBrowser.LaunchAsync();
    }

    public async Task DisposeAsync()
    {
        await _chromium.DisposeAsync();
        await _server.DisposeAsync();
    }

    [Fact]
    public async Task Signing_in_with_a_token_shows_the_demo_study_and_its_page()
    {
        await using var person = await _chromium.NewPersonAsync();
        var page = await person.NewPageAsync();
        var problems = new List<string>();
        page.Console += (_, m) => { if (ChromiumBrowser.IsProblem(m)) problems.Add(m.Text); };
        page.PageError += (_, e) => problems.Add(e);

        await page.GotoAsync(_server.Address.ToString());
        await page.WaitForURLAsync(url => url.Contains("/signin", StringComparison.Ordinal));
        await ChromiumBrowser.ScreenshotAsync(page, "signin-page");
        await page.FillAsync("#token", ServerProcess.AdminToken);
        await page.ClickAsync("button[type=submit]");

        var card = page.Locator(".study-card", new PageLocatorOptions { HasText = "Plate-fin heat sink" });
        await Assertions.Expect(card).ToBeVisibleAsync();
        await Assertions.Expect(card.Locator(".state-bar")).ToHaveAttributeAsync("aria-label", new System.Text.RegularExpressions.Regex(@"of \d+ runs done"));
        await ChromiumBrowser.ScreenshotAsync(page, "studies-page");
        await ChromiumBrowser.WaitUntilLiveAsync(page);

        await card.Locator("a.study-name").ClickAsync();
        await Assertions.Expect(page.Locator("h1")).ToHaveTextAsync("Plate-fin heat sink for the inverter module");
        await Assertions.Expect(page.Locator("table").First).ToContainTextAsync("fin_height");
        // The table renders only the rows in view; the demo's open runs are the highest-numbered, at its end. Its
        // rows come after the page's first render, so it is scrolled once they are there.
        var grid = page.Locator(".grid-scroll");
        await Assertions.Expect(grid.Locator(".pill").First).ToBeVisibleAsync();
        await grid.EvaluateAsync("e => { e.scrollTop = e.scrollHeight; }");
        await Assertions.Expect(grid.Locator(".pill-open").First).ToBeVisibleAsync();
        var scrolled = await grid.EvaluateAsync<double>("e => e.scrollTop");

        // A claim elsewhere re-reads the runs: the reader keeps their place in the table.
        using (var admin = new HttpClient { BaseAddress = _server.Address })
        {
            admin.DefaultRequestHeaders.Authorization = new System.Net.Http.Headers.AuthenticationHeaderValue("Bearer", ServerProcess.AdminToken);
            var claim = await admin.PostAsync("/api/studies/1/claims", new StringContent("{\"count\":1}", System.Text.Encoding.UTF8, "application/json"));
            Assert.True(claim.IsSuccessStatusCode, await claim.Content.ReadAsStringAsync());
        }
        await Assertions.Expect(page.Locator(".state-bar")).ToHaveAttributeAsync("aria-label", new System.Text.RegularExpressions.Regex(@", 3 claimed,"));
        await Assertions.Expect(grid.Locator(".pill-open").First).ToBeVisibleAsync();
        Assert.Equal(scrolled, await grid.EvaluateAsync<double>("e => e.scrollTop"), 1);
        await ChromiumBrowser.ScreenshotAsync(page, "study-page");
        Assert.True(problems.Count == 0, "The browser reported problems:\n" + string.Join("\n", problems));
    }

    [Fact]
    public async Task A_wrong_token_is_refused_with_a_sentence()
    {
        await using var person = await _chromium.NewPersonAsync();
        var page = await person.NewPageAsync();
        await page.GotoAsync(new Uri(_server.Address, "/signin").ToString());
        await page.FillAsync("#token", "rf_wrong");
        await page.ClickAsync("button[type=submit]");
        await Assertions.Expect(page.Locator(".notice-error")).ToContainTextAsync("unknown, revoked");
    }
}
