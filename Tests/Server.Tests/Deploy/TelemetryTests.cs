using System.Net;
using System.Net.Sockets;
using Runfold.Server.Data;
using Runfold.Server.Telemetry;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Deploy;

public sealed class TelemetryTests
{
    [Fact]
    public async Task Metrics_are_served_for_Prometheus_with_requests_and_Runfold_s_own_instruments()
    {
        await using var app = await RunfoldApp.StartAsync();
        using var client = app.AdminClient();
        Assert.Equal(HttpStatusCode.OK, (await client.GetAsync("/api/studies")).StatusCode);
        RunfoldMetrics.RunsClaimed(3);
        RunfoldMetrics.RefitDuration(TimeSpan.FromMilliseconds(250));

        var text = await ScrapeUntilAsync(client, "runfold_analysis_refit_duration_seconds");

        Assert.Contains("http_server_request_duration_seconds", text, StringComparison.Ordinal);
        Assert.Contains("runfold_runs_claimed_total", text, StringComparison.Ordinal);
        Assert.Contains("# TYPE runfold_analysis_refit_duration_seconds histogram", text, StringComparison.Ordinal);
    }

    [Fact]
    public async Task Claims_and_uploads_through_the_API_are_counted()
    {
        await using var app = await RunfoldApp.StartAsync();
        using var client = app.AdminClient();
        var study = await (await client.PostJsonAsync("/api/studies", Runfold.Server.Demo.DemoStudy.Request())).ReadAsync<StudyDetail>();
        var claimedBefore = Value(await client.GetStringAsync("/metrics"), "runfold_runs_claimed_total");
        var uploadedBefore = Value(await client.GetStringAsync("/metrics"), "runfold_results_uploaded_total", "channel=api", "state=failed");

        var runs = await (await client.PostJsonAsync($"/api/studies/{study.Id}/claims", new ClaimRequest(2))).ReadAsync<List<RunDto>>();
        using var put = new HttpRequestMessage(HttpMethod.Put, $"/api/runs/{runs[0].Id}/result")
        {
            Content = System.Net.Http.Json.JsonContent.Create(new ResultRequest(RunState.Failed, Note: "mesh failed"), options: RunfoldJson.Options),
        };
        Assert.Equal(HttpStatusCode.OK, (await client.SendAsync(put)).StatusCode);

        var text = await ScrapeUntilAsync(client, "runfold_results_uploaded_total");
        for (var i = 0; i < 50 && Value(text, "runfold_runs_claimed_total") < claimedBefore + 2; i++)
        {
            await Task.Delay(100);
            text = await client.GetStringAsync("/metrics");
        }
        Assert.True(Value(text, "runfold_runs_claimed_total") >= claimedBefore + 2, text);
        Assert.True(Value(text, "runfold_results_uploaded_total", "channel=api", "state=failed") >= uploadedBefore + 1, text);
    }

    [Fact]
    public async Task Traces_go_to_an_OTLP_collector_only_when_its_endpoint_is_set()
    {
        using var collector = new LoopbackCollector();
        var app = await RunfoldApp.StartAsync(StorageProvider.Sqlite, extra: new Dictionary<string, string?>
        {
            ["OTEL_EXPORTER_OTLP_ENDPOINT"] = collector.Address.ToString(),
            ["OTEL_EXPORTER_OTLP_PROTOCOL"] = "http/protobuf",
            // Export every half second instead of every 5 s (spans) and 60 s (metrics), the OpenTelemetry defaults.
            ["OTEL_BSP_SCHEDULE_DELAY"] = "500",
            ["OTEL_METRIC_EXPORT_INTERVAL"] = "500",
        });
        await using (app)
        {
            using var client = app.AdminClient();
            Assert.Equal(HttpStatusCode.OK, (await client.GetAsync("/api/studies")).StatusCode);
            for (var i = 0; i < 300 && !(collector.Paths.Contains("/v1/traces") && collector.Paths.Contains("/v1/metrics")); i++)
                await Task.Delay(100);
        }

        Assert.Contains("/v1/traces", collector.Paths);
        Assert.Contains("/v1/metrics", collector.Paths);
    }

    /// <summary>The sum of the samples of <paramref name="metric"/> whose labels include <paramref name="labels"/>
    /// ("name=value"), from the Prometheus text format: <c>metric{a="x",b="y"} value [timestamp]</c>.</summary>
    private static double Value(string scrape, string metric, params string[] labels)
    {
        var total = 0.0;
        foreach (var line in scrape.Split('\n'))
        {
            if (!line.StartsWith(metric + "{", StringComparison.Ordinal) && !line.StartsWith(metric + " ", StringComparison.Ordinal)) continue;
            var close = line.IndexOf('}', StringComparison.Ordinal);
            var labelText = close > 0 ? line[(metric.Length + 1)..close].Replace("\"", "", StringComparison.Ordinal) : "";
            if (!labels.All(l => labelText.Split(',').Contains(l))) continue;
            var value = line[(close > 0 ? close + 1 : metric.Length)..].Trim().Split(' ')[0];
            total += double.Parse(value, System.Globalization.CultureInfo.InvariantCulture);
        }
        return total;
    }

    private static async Task<string> ScrapeUntilAsync(HttpClient client, string expected)
    {
        var text = "";
        for (var i = 0; i < 50 && !text.Contains(expected, StringComparison.Ordinal); i++)
        {
            if (i > 0) await Task.Delay(100); // the exporter caches a scrape for a moment
            text = await client.GetStringAsync("/metrics");
        }
        return text;
    }

    /// <summary>Accepts OTLP/HTTP posts on a loopback port and remembers their paths (it does not decode them).</summary>
    private sealed class LoopbackCollector : IDisposable
    {
        private readonly HttpListener _listener = new();
        private readonly List<string> _paths = [];

        public LoopbackCollector()
        {
            using (var probe = new TcpListener(IPAddress.Loopback, 0))
            {
                probe.Start();
                Address = new Uri($"http://127.0.0.1:{((IPEndPoint)probe.LocalEndpoint).Port}/");
            }
            _listener.Prefixes.Add(Address.ToString());
            _listener.Start();
            _ = Task.Run(ServeAsync);
        }

        public Uri Address { get; }

        public IReadOnlyList<string> Paths { get { lock (_paths) return [.. _paths]; } }

        private async Task ServeAsync()
        {
            while (_listener.IsListening)
            {
                HttpListenerContext context;
                try { context = await _listener.GetContextAsync(); }
                catch (HttpListenerException) { return; }
                catch (ObjectDisposedException) { return; }
                lock (_paths) _paths.Add(context.Request.Url!.AbsolutePath);
                await context.Request.InputStream.CopyToAsync(Stream.Null);
                context.Response.StatusCode = 200;
                context.Response.ContentType = "application/x-protobuf";
                context.Response.Close();
            }
        }

        public void Dispose() => _listener.Close();
    }
}
