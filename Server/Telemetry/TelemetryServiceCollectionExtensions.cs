using OpenTelemetry.Exporter;
using OpenTelemetry.Logs;
using OpenTelemetry.Metrics;
using OpenTelemetry.Resources;
using OpenTelemetry.Trace;

namespace Runfold.Server.Telemetry;

/// <summary>
/// OpenTelemetry traces and metrics: ASP.NET Core requests, Npgsql commands and Runfold's own instruments
/// (<see cref="RunfoldMetrics"/>). Metrics are always served for Prometheus at <c>/metrics</c>; traces, metrics and
/// logs also go to an OTLP collector when <c>OTEL_EXPORTER_OTLP_ENDPOINT</c> is set (off by default).
/// </summary>
public static class TelemetryServiceCollectionExtensions
{
    public const string ScrapePath = "/metrics";

    public static WebApplicationBuilder AddRunfoldTelemetry(this WebApplicationBuilder builder)
    {
        ArgumentNullException.ThrowIfNull(builder);
        var otlp = builder.Configuration["OTEL_EXPORTER_OTLP_ENDPOINT"];
        var exportOtlp = Uri.TryCreate(otlp, UriKind.Absolute, out var endpoint);
        var protocol = builder.Configuration["OTEL_EXPORTER_OTLP_PROTOCOL"] is "http/protobuf" ? OtlpExportProtocol.HttpProtobuf : OtlpExportProtocol.Grpc;
        void Otlp(OtlpExporterOptions o, string signal)
        {
            o.Protocol = protocol;
            // With http/protobuf each signal has its own path under the base address (the OTLP specification).
            o.Endpoint = protocol == OtlpExportProtocol.HttpProtobuf ? new Uri(endpoint!.ToString().TrimEnd('/') + "/v1/" + signal) : endpoint!;
        }

        var telemetry = builder.Services.AddOpenTelemetry()
            .ConfigureResource(r => r.AddService("runfold-server", serviceVersion: typeof(RunfoldMetrics).Assembly.GetName().Version?.ToString()))
            .WithTracing(t =>
            {
                t.AddSource(RunfoldMetrics.SourceName, "Npgsql")
                    .AddAspNetCoreInstrumentation(o => o.Filter = http => !http.Request.Path.StartsWithSegments(ScrapePath) && !http.Request.Path.StartsWithSegments("/health"));
                if (exportOtlp) t.AddOtlpExporter(o => Otlp(o, "traces"));
            })
            .WithMetrics(m =>
            {
                m.AddMeter(RunfoldMetrics.SourceName, "Npgsql")
                    .AddAspNetCoreInstrumentation()
                    .AddPrometheusExporter();
                if (exportOtlp) m.AddOtlpExporter(o => Otlp(o, "metrics"));
            });
        if (exportOtlp)
        {
            telemetry.WithLogging(l => l.AddOtlpExporter(o => Otlp(o, "logs")), o =>
            {
                o.IncludeFormattedMessage = true;
                o.IncludeScopes = true;
            });
        }
        return builder;
    }

    /// <summary>GET /metrics: the Prometheus text format (scrape it from inside the cluster).</summary>
    public static IEndpointRouteBuilder MapRunfoldTelemetry(this IEndpointRouteBuilder app)
    {
        app.MapPrometheusScrapingEndpoint(ScrapePath);
        return app;
    }
}
