using System.Net;
using System.Text.Json;
using Runfold.Server.Data.Entities;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;
using Runfold.Tests.Samples;

namespace Runfold.Server.Tests.Reports;

/// <summary>GET /api/studies/{id}/report on PostgreSQL: built from the latest stored snapshot row, a download for
/// every member, refused to others, with every study text encoded.</summary>
public sealed class ReportApiTests : IAsyncLifetime
{
    private RunfoldApp _app = null!;
    private StudyDetail _study = null!;
    private readonly Dictionary<string, string?> _tokens = [];

    public async Task InitializeAsync()
    {
        _app = await RunfoldApp.StartAsync();
        _study = await TestTeam.CreateStudyAsync(_app, TestTeam.HeatSinkStudy("<img src=x onerror=alert(1)> fins") with
        {
            Description = "Budget \"60 Pa\" & <b>no</b> more",
        });
        foreach (var (name, role) in new (string, StudyRole?)[] { ("ana", StudyRole.Analyst), ("vik", StudyRole.Viewer), ("olga", null) })
        {
            _tokens[name] = await TestTeam.PersonAsync(_app, name);
            if (role is { } r) await TestTeam.JoinAsync(_app, _study.Id, name, r);
        }
        _tokens["anonymous"] = null;
        _tokens["admin"] = RunfoldApp.AdminToken;
    }

    public async Task DisposeAsync() => await _app.DisposeAsync();

    private async Task StoreSnapshotsAsync(params int[] versions)
    {
        var (_, runs) = SampleAnalysis.HeatSink();
        await using var db = _app.Db();
        foreach (var version in versions)
        {
            var snapshot = SampleAnalysis.Snapshot(_study, runs, version);
            db.AnalysisSnapshots.Add(new AnalysisSnapshot
            {
                StudyId = _study.Id, Version = version, ResultSetVersion = snapshot.ResultSetVersion, BasedOnRuns = snapshot.BasedOnRuns,
                ComputedAt = snapshot.ComputedAt, PayloadJson = JsonSerializer.Serialize(snapshot, RunfoldJson.Options),
            });
        }
        await db.SaveChangesAsync();
    }

    [Fact]
    public async Task A_viewer_downloads_one_html_file_built_from_the_latest_snapshot()
    {
        await StoreSnapshotsAsync(1, 2);
        using var viewer = _app.ClientWithToken(_tokens["vik"]);
        var response = await viewer.GetAsync($"/api/studies/{_study.Id}/report");
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        Assert.Equal("text/html", response.Content.Headers.ContentType?.MediaType);
        Assert.Equal("utf-8", response.Content.Headers.ContentType?.CharSet);
        Assert.Equal("attachment", response.Content.Headers.ContentDisposition?.DispositionType);
        Assert.Matches(@"^img-src-x-onerror-alert-1-fins-report-\d{8}-\d{4}\.html$", response.Content.Headers.ContentDisposition?.FileNameStar ?? response.Content.Headers.ContentDisposition?.FileName);

        var html = await response.Content.ReadAsStringAsync();
        Assert.Contains("Analysis 2, based on 26 of 40 runs", html, StringComparison.Ordinal);
        Assert.Contains("0 of 6 runs done", html, StringComparison.Ordinal);
        Assert.Contains("<section id=\"candidates\"", html, StringComparison.Ordinal);
        Assert.Contains("licensed engineering practice", html, StringComparison.Ordinal);
        Assert.DoesNotContain("<img", html, StringComparison.OrdinalIgnoreCase);
        Assert.Contains("&lt;img src=x onerror=alert(1)&gt; fins", html, StringComparison.Ordinal);
        Assert.Contains("Budget &quot;60 Pa&quot; &amp; &lt;b&gt;no&lt;/b&gt; more", html, StringComparison.Ordinal);
    }

    [Fact]
    public async Task Without_a_snapshot_the_report_still_answers_and_says_so()
    {
        using var analyst = _app.ClientWithToken(_tokens["ana"]);
        var html = await analyst.GetStringAsync($"/api/studies/{_study.Id}/report");
        Assert.Contains("No analysis snapshot exists yet.", html, StringComparison.Ordinal);
    }

    [Theory]
    [InlineData("admin", 200)]
    [InlineData("ana", 200)]
    [InlineData("vik", 200)]
    [InlineData("olga", 404)]
    [InlineData("anonymous", 401)]
    public async Task Members_read_the_report_others_do_not(string who, int expected)
    {
        using var client = _app.ClientWithToken(_tokens[who]);
        var response = await client.GetAsync($"/api/studies/{_study.Id}/report");
        Assert.Equal(expected, (int)response.StatusCode);
        if (expected >= 400)
        {
            Assert.Equal("application/problem+json", response.Content.Headers.ContentType?.MediaType);
            Assert.False(string.IsNullOrWhiteSpace((await response.ReadAsync<JsonElement>()).GetProperty("detail").GetString()));
        }
    }
}
