using System.Net;
using System.Net.Sockets;
using Runfold.Server.Data;
using Runfold.Server.Telemetry;
using Runfold.Server.Tests.Infrastructure;

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
    public async Task Traces_go_to_an_OTLP_collector_only_when_its_endpoint_is_set()
    {
        using var collector = new LoopbackCollector();
        var app = await RunfoldApp.StartAsync(StorageProvider.Sqlite, extra: new Dictionary<string, string?>
        {
            ["OTEL_EXPORTER_OTLP_ENDPOINT"] = collector.Address.ToString(),
            ["OTEL_EXPORTER_OTLP_PROTOCOL"] = "http/protobuf",
        });
        await using (app)
        {
            using var client = app.AdminClient();
            Assert.Equal(HttpStatusCode.OK, (await client.GetAsync("/api/studies")).StatusCode);
        } // stopping the host flushes the exporters

        Assert.Contains("/v1/traces", collector.Paths);
        Assert.Contains("/v1/metrics", collector.Paths);
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
