using System.Diagnostics;
using System.Globalization;
using System.Net;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Net.Sockets;
using System.Text;
using System.Text.Json;
using System.Threading.Channels;
using Microsoft.Playwright;
using Runfold.Shared.Studies;
using Runfold.TestFunctions;

namespace Runfold.Benchmarks;

/// <summary>
/// From <c>PUT /api/runs/{id}/result</c> to the snapshot-ready event, for a study of 8 factors and 3 responses
/// with 300 done runs: 50 uploads one after another, each timed until the <c>snapshot</c> event of its result-set
/// version arrives on a server-sent-event stream — of the instance that refits (it holds the study's lock) and of
/// a second instance on the same PostgreSQL, which hears it through LISTEN/NOTIFY. Two server processes (the
/// Release build, as deployed) on a throwaway PostgreSQL cluster (see the claims benchmark).
/// Responses: published test functions of the VLSE (Surjanovic &amp; Bingham) over the Borehole inputs — Borehole
/// itself, Hartmann-6 of the first six inputs scaled to [0, 1], Ishigami of the first three scaled to [−π, π].
/// Ten study pages in Debian's Chromium (headless, ten people: five on each instance) follow the study; each upload is
/// also timed until every one of them shows the new run count in its analysis line, in the DOM.
/// Goal: p95 ≤ 1.5 s to the snapshot and ≤ 2.5 s to the pages.
/// </summary>
public static class AnalysisLatencyBenchmark
{
    private const string Token = "rf_bench_admin_token_0123456789abcdef";
    private const int Done = 300;
    private const int Uploads = 50;

    public static void Register() =>
        BenchmarkRegistry.Register("analysis-latency", "PUT result → snapshot-ready (owner and second instance), 300 done runs, 8 factors, 3 responses, 50 uploads", Run);

    private static int Run(string[] args) => RunAsync().GetAwaiter().GetResult();

    private static async Task<int> RunAsync()
    {
        await using var cluster = await ClaimsBenchmark.Cluster.StartAsync();
        var database = cluster.ConnectionString("runfold_bench");
        await using var owner = await ServerUnderTest.StartAsync(database);
        using var client = owner.Client();
        var (studyId, runs) = await CreateStudyAsync(client);

        // 300 results in one bulk file: one refit that compares every model on 300 runs.
        var clock = Stopwatch.StartNew();
        await using var ownerEvents = await SnapshotEvents.OpenAsync(owner.Client(), studyId);
        await UploadAsync(client, studyId, runs.Take(Done));
        var first = await ownerEvents.WaitForAsync(v => true, TimeSpan.FromMinutes(10));
        var firstSnapshot = clock.Elapsed;
        Console.WriteLine($"First snapshot of {Done} runs (every model compared): {firstSnapshot.TotalSeconds:0.0} s (result-set version {first}).");

        await using var second = await ServerUnderTest.StartAsync(database);
        await using var secondEvents = await SnapshotEvents.OpenAsync(second.Client(), studyId);
        await using var pages = await StudyPages.OpenAsync([owner.Address, second.Address], studyId, PageCount, $"Analysis based on {Done} of");

        var put = new List<double>();
        var toOwner = new List<double>();
        var toSecond = new List<double>();
        var toPages = new List<double>();
        // Each upload bumps the study's result-set version by one: upload i is analysed in the snapshot of first + i.
        var version = first;
        foreach (var run in runs.Skip(Done).Take(Uploads))
        {
            version++;
            var started = Stopwatch.GetTimestamp();
            var response = await client.PutAsJsonAsync($"/api/runs/{run.Id}/result", new { state = "done", values = Values(run) }, RunfoldJson.Options);
            if (!response.IsSuccessStatusCode) throw new InvalidOperationException($"Upload of run {run.Number}: {(int)response.StatusCode} {await response.Content.ReadAsStringAsync()}");
            put.Add(Stopwatch.GetElapsedTime(started).TotalMilliseconds);
            await ownerEvents.WaitForAsync(v => v >= version, TimeSpan.FromMinutes(2));
            toOwner.Add(Stopwatch.GetElapsedTime(started).TotalMilliseconds);
            await secondEvents.WaitForAsync(v => v >= version, TimeSpan.FromMinutes(2));
            toSecond.Add(Stopwatch.GetElapsedTime(started).TotalMilliseconds);
            toPages.Add(await pages.WaitUntilAllShowAsync($"Analysis based on {Done + (int)(version - first)} of", started));
            await Task.Delay(100); // an upload every few hundred milliseconds, not a burst
        }

        Console.WriteLine();
        Console.WriteLine($"| {Uploads} uploads, {Done}→{Done + Uploads} done runs, 8 factors, 3 responses | median | p95 | max |");
        Console.WriteLine("|---|---:|---:|---:|");
        Row("PUT result answered", put);
        Row("snapshot-ready on the refitting instance's stream", toOwner);
        Row("snapshot-ready on the second instance's stream", toSecond);
        Row($"new run count in the DOM of all {PageCount} Chromium pages", toPages);
        // Where a refit's time goes, from the refitting instance's log line of each snapshot of the uploads.
        var parts = owner.SnapshotLines.Skip(1)
            .SelectMany(line => System.Text.RegularExpressions.Regex.Matches(line, @"(\w[\w ]*?) ([\d,]+) ms(?=[,)])").Select(m => (Part: m.Groups[1].Value.Trim(), Ms: double.Parse(m.Groups[2].Value, NumberStyles.AllowThousands, CultureInfo.InvariantCulture))))
            .GroupBy(p => p.Part).ToList();
        foreach (var part in parts) Row($"refit part: {part.Key}", [.. part.Select(p => p.Ms)]);
        Console.WriteLine($"| first snapshot of {Done} runs, every model compared | {firstSnapshot.TotalMilliseconds:N0} ms | | |");
        var history = (await client.GetFromJsonAsync<List<AnalysisHistoryPointDto>>($"/api/studies/{studyId}/analysis/history", RunfoldJson.Options))!;
        var latest = (await client.GetFromJsonAsync<AnalysisSnapshotDto>($"/api/studies/{studyId}/analysis", RunfoldJson.Options))!;
        Console.WriteLine($"| snapshots stored | {history.Count} (one per upload, and one per background comparison of every model) | | |");
        Console.WriteLine($"| models of the last snapshot compared at | {string.Join(", ", latest.Responses.Select(r => $"{r.Name} {r.Model?.ComparedAtRuns} runs ({r.Model?.Kind})"))} | | |");
        var p95 = Quantile(toOwner, 0.95);
        var pagesP95 = Quantile(toPages, 0.95);
        Console.WriteLine();
        Console.WriteLine($"Goal: p95 ≤ 1,500 ms to the snapshot: {(p95 <= 1500 ? "met" : "missed")} ({p95:N0} ms).");
        Console.WriteLine($"Goal: p95 ≤ 2,500 ms to the pages: {(pagesP95 <= 2500 ? "met" : "missed")} ({pagesP95:N0} ms).");
        return p95 <= 1500 && pagesP95 <= 2500 ? 0 : 1;
    }

    private const int PageCount = 10;

    private static void Row(string what, List<double> milliseconds) =>
        Console.WriteLine($"| {what} | {Quantile(milliseconds, 0.5):N0} ms | {Quantile(milliseconds, 0.95):N0} ms | {milliseconds.Max():N0} ms |");

    /// <summary>The nearest-rank quantile.</summary>
    private static double Quantile(List<double> values, double q)
    {
        var sorted = values.Order().ToArray();
        return sorted[Math.Clamp((int)Math.Ceiling(q * sorted.Length) - 1, 0, sorted.Length - 1)];
    }

    private static readonly TestFunction Borehole = PublishedTestFunctions.Borehole;
    private static readonly string[] Inputs = ["rw", "r", "Tu", "Hu", "Tl", "Hl", "L", "Kw"];

    private static async Task<(int StudyId, List<RunDto> Runs)> CreateStudyAsync(HttpClient client)
    {
        var request = new CreateStudyRequest("Analysis latency (Borehole inputs)",
            [.. Inputs.Select((name, i) => new FactorSpec(name, FactorKind.Continuous, Borehole.Lower[i], Borehole.Upper[i]))],
            [new ResponseSpec("borehole", ResponseGoal.Maximize), new ResponseSpec("hartmann6", ResponseGoal.Minimize), new ResponseSpec("ishigami", ResponseGoal.None)],
            new DesignSpec(DesignMethod.LatinHypercube, Runs: Done + Uploads, Seed: 7));
        var created = await client.PostAsJsonAsync("/api/studies", request, RunfoldJson.Options);
        if (created.StatusCode != HttpStatusCode.Created) throw new InvalidOperationException(await created.Content.ReadAsStringAsync());
        var study = (await created.Content.ReadFromJsonAsync<StudyDetail>(RunfoldJson.Options))!;
        return (study.Id, [.. study.Runs!.OrderBy(r => r.Number)]);
    }

    private static Dictionary<string, double> Values(RunDto run)
    {
        var x = Inputs.Select(name => run.Factors[name].Number).ToArray();
        var unit = x.Select((v, i) => (v - Borehole.Lower[i]) / (Borehole.Upper[i] - Borehole.Lower[i])).ToArray();
        var ishigami = PublishedTestFunctions.Ishigami();
        return new()
        {
            ["borehole"] = Borehole.Evaluate(x),
            ["hartmann6"] = PublishedTestFunctions.Hartmann6.Evaluate(PublishedTestFunctions.Hartmann6.FromUnit(unit.AsSpan(0, 6))),
            ["ishigami"] = ishigami.Evaluate(ishigami.FromUnit(unit.AsSpan(0, 3))),
        };
    }

    private static async Task UploadAsync(HttpClient client, int studyId, IEnumerable<RunDto> runs)
    {
        var csv = new StringBuilder("run,borehole,hartmann6,ishigami\n");
        foreach (var run in runs)
        {
            var v = Values(run);
            csv.Append(CultureInfo.InvariantCulture, $"{run.Number},{v["borehole"]:R},{v["hartmann6"]:R},{v["ishigami"]:R}\n");
        }
        using var form = new MultipartFormDataContent();
        var file = new ByteArrayContent(Encoding.UTF8.GetBytes(csv.ToString()));
        file.Headers.ContentType = new MediaTypeHeaderValue("text/csv");
        form.Add(file, "file", "first-300.csv");
        var response = await client.PostAsync($"/api/studies/{studyId}/results", form);
        if (!response.IsSuccessStatusCode) throw new InvalidOperationException(await response.Content.ReadAsStringAsync());
    }

    /// <summary>A server process (the Release build next to this one) on the benchmark's PostgreSQL database.</summary>
    private sealed class ServerUnderTest : IAsyncDisposable
    {
        private readonly Process _process;

        private ServerUnderTest(Process process, Uri address) => (_process, Address) = (process, address);

        public Uri Address { get; }

        /// <summary>The server's log line of each snapshot it stored, with the time of the fits and of each stage.</summary>
        public System.Collections.Concurrent.ConcurrentQueue<string> SnapshotLines { get; } = new();

        public static async Task<ServerUnderTest> StartAsync(string database)
        {
            var port = FreePort();
            var address = new Uri($"http://127.0.0.1:{port}");
            var folder = Path.GetDirectoryName(typeof(Runfold.Server.Analysis.AnalysisCoordinator).Assembly.Location)!;
            var start = new ProcessStartInfo("dotnet")
            {
                ArgumentList = { Path.Combine(folder, "Runfold.Server.dll"), "--urls", address.ToString().TrimEnd('/') },
                WorkingDirectory = folder,
                RedirectStandardOutput = true,
                RedirectStandardError = true,
                UseShellExecute = false,
            };
            start.Environment["ASPNETCORE_ENVIRONMENT"] = "Production";
            start.Environment["RUNFOLD_POSTGRES"] = database;
            start.Environment["RUNFOLD_ADMIN_TOKEN"] = Token;
            start.Environment["RUNFOLD_DEMO"] = "0";
            start.Environment["RUNFOLD_MAX_RUNS"] = "10000";
            start.Environment["RUNFOLD_TOKEN_PER_MINUTE"] = "100000";
            start.Environment["RUNFOLD_SIGNIN_PER_MINUTE"] = "1000"; // ten people sign in from one address
            var process = Process.Start(start) ?? throw new InvalidOperationException("The server did not start.");
            var server = new ServerUnderTest(process, address);
            process.OutputDataReceived += (_, e) => { if (e.Data is { } line && line.Contains(" after the refit started (", StringComparison.Ordinal)) server.SnapshotLines.Enqueue(line); };
            process.ErrorDataReceived += (_, e) => { if (e.Data is { Length: > 0 } line) Console.Error.WriteLine("  server: " + line); };
            process.BeginOutputReadLine();
            process.BeginErrorReadLine();
            using var probe = new HttpClient { BaseAddress = address };
            var clock = Stopwatch.StartNew();
            while (true)
            {
                try
                {
                    if ((await probe.GetAsync("/health")).IsSuccessStatusCode) return server;
                }
                catch (HttpRequestException) when (clock.Elapsed < TimeSpan.FromSeconds(90) && !process.HasExited)
                {
                }
                if (clock.Elapsed > TimeSpan.FromSeconds(90) || process.HasExited) throw new InvalidOperationException("The server did not become healthy.");
                await Task.Delay(200);
            }
        }

        public HttpClient Client()
        {
            var client = new HttpClient { BaseAddress = Address, Timeout = Timeout.InfiniteTimeSpan };
            client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", Token);
            return client;
        }

        public async ValueTask DisposeAsync()
        {
            if (!_process.HasExited)
            {
                _process.Kill(entireProcessTree: true);
                await _process.WaitForExitAsync();
            }
            _process.Dispose();
        }

        private static int FreePort()
        {
            using var listener = new TcpListener(IPAddress.Loopback, 0);
            listener.Start();
            return ((IPEndPoint)listener.LocalEndpoint).Port;
        }
    }

    /// <summary>Study pages in headless Chromium, each in a context of its own (one person each), spread over the
    /// given server instances.</summary>
    private sealed class StudyPages : IAsyncDisposable
    {
        private const string ShowsText = "t => { const e = document.querySelector('.snapshot-basis'); return !!e && e.textContent.includes(t); }";
        private readonly IPlaywright _playwright;
        private readonly IBrowser _browser;
        private readonly List<IPage> _pages;

        private StudyPages(IPlaywright playwright, IBrowser browser, List<IPage> pages) => (_playwright, _browser, _pages) = (playwright, browser, pages);

        public static async Task<StudyPages> OpenAsync(IReadOnlyList<Uri> servers, int studyId, int count, string shown)
        {
            var playwright = await Playwright.CreateAsync();
            var browser = await playwright.Chromium.LaunchAsync(new BrowserTypeLaunchOptions
            {
                ExecutablePath = Environment.GetEnvironmentVariable("RUNFOLD_CHROMIUM") ?? "/usr/bin/chromium",
                Headless = true,
                Args =
                [
                    "--no-sandbox", "--disable-gpu", "--disable-background-networking", "--disable-component-update",
                    "--disable-sync", "--no-first-run", "--disable-quic", "--disable-dev-shm-usage",
                ],
            });
            var pages = new List<IPage>(count);
            for (var i = 0; i < count; i++)
            {
                var server = servers[i % servers.Count];
                var context = await browser.NewContextAsync(new BrowserNewContextOptions { ViewportSize = new ViewportSize { Width = 1280, Height = 800 } });
                var page = await context.NewPageAsync();
                await page.GotoAsync(new Uri(server, "/signin").ToString());
                await page.FillAsync("#token", Token);
                await page.ClickAsync("button[type=submit]");
                await page.WaitForSelectorAsync("h1:has-text('Studies')");
                await page.GotoAsync(new Uri(server, $"/studies/{studyId}").ToString());
                await page.WaitForFunctionAsync(ShowsText, shown, new PageWaitForFunctionOptions { Timeout = 120_000 });
                pages.Add(page);
            }
            Console.WriteLine($"{count} study pages open in Chromium, {count / servers.Count} on each instance.");
            return new StudyPages(playwright, browser, pages);
        }

        /// <summary>Milliseconds from <paramref name="started"/> until the last page shows <paramref name="text"/>.</summary>
        public async Task<double> WaitUntilAllShowAsync(string text, long started)
        {
            var options = new PageWaitForFunctionOptions { PollingInterval = 10, Timeout = 120_000 };
            await Task.WhenAll(_pages.Select(p => p.WaitForFunctionAsync(ShowsText, text, options)));
            return Stopwatch.GetElapsedTime(started).TotalMilliseconds;
        }

        public async ValueTask DisposeAsync()
        {
            await _browser.DisposeAsync();
            _playwright.Dispose();
        }
    }

    /// <summary>The snapshot events of one study's event stream (result-set versions, as they arrive).</summary>
    private sealed class SnapshotEvents : IAsyncDisposable
    {
        private readonly HttpClient _client;
        private readonly HttpResponseMessage _response;
        private readonly Channel<long> _versions = Channel.CreateUnbounded<long>();
        private readonly CancellationTokenSource _stop = new();
        private readonly Task _reading;

        private SnapshotEvents(HttpClient client, HttpResponseMessage response)
        {
            (_client, _response) = (client, response);
            _reading = Task.Run(ReadAsync);
        }

        public static async Task<SnapshotEvents> OpenAsync(HttpClient client, int studyId)
        {
            var response = await client.GetAsync($"/api/studies/{studyId}/events", HttpCompletionOption.ResponseHeadersRead);
            response.EnsureSuccessStatusCode();
            return new SnapshotEvents(client, response);
        }

        /// <summary>The first snapshot event whose result-set version matches; earlier ones are passed over.</summary>
        public async Task<long> WaitForAsync(Func<long, bool> matches, TimeSpan timeout)
        {
            using var cancel = new CancellationTokenSource(timeout);
            while (true)
            {
                var version = await _versions.Reader.ReadAsync(cancel.Token);
                if (matches(version)) return version;
            }
        }

        private async Task ReadAsync()
        {
            try
            {
                using var reader = new StreamReader(await _response.Content.ReadAsStreamAsync(_stop.Token));
                var snapshot = false;
                while (await reader.ReadLineAsync(_stop.Token) is { } line)
                {
                    if (line.StartsWith("event: ", StringComparison.Ordinal)) snapshot = line == "event: snapshot";
                    else if (snapshot && line.StartsWith("data: ", StringComparison.Ordinal))
                        _versions.Writer.TryWrite(JsonSerializer.Deserialize<StudyLiveEvent>(line[6..], RunfoldJson.Options)!.ResultSetVersion);
                    else if (line.Length == 0) snapshot = false;
                }
            }
            catch (Exception e) when (e is OperationCanceledException or IOException or HttpRequestException)
            {
            }
        }

        public async ValueTask DisposeAsync()
        {
            await _stop.CancelAsync();
            _response.Dispose();
            await _reading;
            _client.Dispose();
            _stop.Dispose();
        }
    }
}
