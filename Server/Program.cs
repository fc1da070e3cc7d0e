using Runfold.Client;
using Runfold.Server.Analysis;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Designs;
using Runfold.Server.Hosting;
using Runfold.Server.Reports;
using Runfold.Server.Live;
using Runfold.Server.Results;
using Runfold.Server.Runs;
using Runfold.Server.Sharing;
using Runfold.Server.Studies;
using Runfold.Server.Telemetry;
using Scalar.AspNetCore;

if (CommandLine.IsCommand(args)) return await CommandLine.RunAsync(args);

var builder = WebApplication.CreateBuilder(args);
builder.WebHost.UseStaticWebAssets();

var settings = RunfoldSettings.From(builder.Configuration);
builder.Services.AddSingleton(settings);
builder.Services.AddSingleton(TimeProvider.System);
// First hosted service: migrations must run before anything else (data protection's key ring) reads the database.
builder.Services.AddHostedService<StartupTasks>();
builder.Services.AddRunfoldHttp();
builder.Services.AddRunfoldStorage(settings);
builder.Services.AddRunfoldAuth(settings);
builder.Services.AddRunfoldRateLimits(settings);
builder.Services.AddRunfoldHealth();
builder.Services.AddStudies();
builder.Services.AddRuns();
builder.Services.AddDesigns();
builder.Services.AddResults();
builder.Services.AddLive(settings);
builder.Services.AddAnalysis(settings);
builder.Services.AddRunfoldPages();
builder.Services.AddSharing();
builder.Services.AddReports();
builder.AddRunfoldTelemetry();

var app = builder.Build();

app.UseExceptionHandler();
app.UseStatusCodePages();
app.UseRunfoldSecurityHeaders();
app.UseRateLimiter();
app.UseAuthentication();
app.UseAuthorization();
app.UseAntiforgery();

app.MapStaticAssets();
app.MapOpenApi();
app.MapScalarApiReference("/api-docs", o => o.WithTitle("Runfold API"));
app.MapHealthApi();
app.MapRunfoldTelemetry();
app.MapSignInApi();
app.MapStudiesApi();
app.MapRunsApi();
app.MapDesignsApi();
app.MapResultsApi();
app.MapAnalysisApi();
app.MapStudyEventsApi();
app.MapAccountApi();
app.MapSharingApi();
app.MapReportsApi();
app.MapRazorComponents<App>().AddInteractiveServerRenderMode();

await app.RunAsync();
return 0;

/// <summary>The entry point, visible to the test host.</summary>
public partial class Program;
