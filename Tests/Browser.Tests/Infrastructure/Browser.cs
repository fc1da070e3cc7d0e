using Microsoft.Playwright;

namespace Runfold.Browser.Tests.Infrastructure;

/// <summary>Debian's Chromium, headless, driven by Playwright; screenshots go to the test artefacts folder.</summary>
public sealed class ChromiumBrowser : IAsyncDisposable
{
    private readonly IPlaywright _playwright;

    private ChromiumBrowser(IPlaywright playwright, IBrowser browser) => (_playwright, Browser) = (playwright, browser);

    public IBrowser Browser { get; }

    public static async Task<ChromiumBrowser> LaunchAsync()
    {
        var executable = Environment.GetEnvironmentVariable("RUNFOLD_CHROMIUM") ?? "/usr/bin/chromium";
        if (!File.Exists(executable))
            throw new InvalidOperationException($"Chromium is not at {executable}. Run the tests with Tests/run.sh, which installs it, or set RUNFOLD_CHROMIUM.");
        var playwright = await Playwright.CreateAsync();
        var browser = await playwright.Chromium.LaunchAsync(new BrowserTypeLaunchOptions
        {
            ExecutablePath = executable,
            Headless = true,
            Args =
            [
                "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
                "--disable-sync", "--no-first-run", "--disable-quic", "--disable-dev-shm-usage",
            ],
        });
        return new ChromiumBrowser(playwright, browser);
    }

    /// <summary>A fresh context (its own cookies: one person) with a 1280×800 window.</summary>
    public Task<IBrowserContext> NewPersonAsync() =>
        Browser.NewContextAsync(new BrowserNewContextOptions { ViewportSize = new ViewportSize { Width = 1280, Height = 800 } });

    /// <summary>A person signed in with a password in a context of their own, on the studies page; console
    /// errors and warnings, page errors and dialogs go to <paramref name="problems"/>.</summary>
    public async Task<IPage> SignInAsync(Uri server, string userName, string password, List<string> problems)
    {
        ArgumentNullException.ThrowIfNull(server);
        ArgumentNullException.ThrowIfNull(problems);
        var person = await NewPersonAsync();
        var page = await person.NewPageAsync();
        page.Console += (_, m) => { if (IsProblem(m)) problems.Add(m.Text); };
        page.PageError += (_, e) => problems.Add(e);
        page.Dialog += (_, d) => { problems.Add("dialog: " + d.Message); _ = d.DismissAsync(); };
        await page.GotoAsync(new Uri(server, "/signin").ToString());
        await page.FillAsync("#userName", userName);
        await page.FillAsync("#password", password);
        await page.ClickAsync("#password-signin");
        await Assertions.Expect(page.Locator("h1")).ToHaveTextAsync("Studies");
        return page;
    }

    /// <summary>A console message that counts as a problem of the page: every error, and every warning but the
    /// renderer's own performance notes. Without a GPU, Chromium renders WebGL (Plotly's 3-D surface) in software and
    /// says that reading pixels back stalls and that a canvas read often could be flagged for it; those are about the
    /// machine, not about the page.</summary>
    public static bool IsProblem(IConsoleMessage message)
    {
        ArgumentNullException.ThrowIfNull(message);
        if (message.Type is "error") return true;
        if (message.Type is not "warning") return false;
        var text = message.Text;
        var rendererNote = (text.Contains("GL Driver Message", StringComparison.Ordinal) && text.Contains("Performance", StringComparison.Ordinal))
                           || text.StartsWith("Canvas2D: Multiple readback operations using getImageData", StringComparison.Ordinal);
        return !rendererNote;
    }

    public static string ArtifactsFolder()
    {
        var folder = Environment.GetEnvironmentVariable("RUNFOLD_TEST_ARTIFACTS")
                     ?? Path.Combine(ServerProcess.RepositoryRoot(), "Tests", "artifacts");
        var screenshots = Path.Combine(folder, "screenshots");
        Directory.CreateDirectory(screenshots);
        return screenshots;
    }

    public static async Task<string> ScreenshotAsync(IPage page, string name)
    {
        ArgumentNullException.ThrowIfNull(page);
        var path = Path.Combine(ArtifactsFolder(), name + ".png");
        await page.ScreenshotAsync(new PageScreenshotOptions { Path = path, FullPage = true });
        return path;
    }

    /// <summary>Waits until the page's circuit is connected (the layout marks itself <c>data-live="on"</c>), so
    /// clicks are handled by the interactive router rather than racing the first connection.</summary>
    public static Task WaitUntilLiveAsync(IPage page)
    {
        ArgumentNullException.ThrowIfNull(page);
        return Assertions.Expect(page.Locator("[data-live=on]")).ToBeAttachedAsync(new() { Timeout = 15_000 });
    }

    public async ValueTask DisposeAsync()
    {
        await Browser.DisposeAsync();
        _playwright.Dispose();
    }
}
