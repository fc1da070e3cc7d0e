using System.Net;
using System.Net.Http.Headers;
using System.Text;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Time.Testing;
using Runfold.Server.Data;
using Runfold.Server.Runs;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Runs;

/// <summary>The embedded store (one person's machine, the demo) runs the same workflow: claims under SQLite's
/// write lock, results, bulk files, the export and the lease sweep.</summary>
public sealed class SqliteWorkflowTests
{
    [Fact]
    public async Task Claims_results_bulk_upload_export_and_the_sweep_work_on_SQLite()
    {
        var clock = new FakeTimeProvider(new DateTimeOffset(2026, 11, 30, 8, 0, 0, TimeSpan.Zero));
        await using var app = await RunfoldApp.StartAsync(StorageProvider.Sqlite, extra: new Dictionary<string, string?> { ["RUNFOLD_TOKEN_PER_MINUTE"] = "100000" },
            services: FakeClock.Install(clock));
        var study = await TestTeam.CreateStudyAsync(app, TestTeam.HeatSinkStudy("Embedded", 10, 10));
        var token = await TestTeam.PersonAsync(app, "ana");
        await TestTeam.JoinAsync(app, study.Id, "ana", StudyRole.Analyst);

        // Eight clients at once: SQLite serialises the claims, none is handed out twice.
        var claimed = await Task.WhenAll(Enumerable.Range(0, 8).Select(async _ =>
        {
            using var client = app.ClientWithToken(token);
            var response = await client.PostJsonAsync($"/api/studies/{study.Id}/claims", new ClaimRequest(5));
            Assert.Equal(HttpStatusCode.OK, response.StatusCode);
            return await response.ReadAsync<List<RunDto>>();
        }));
        var ids = claimed.SelectMany(c => c).Select(r => r.Id).ToList();
        Assert.Equal(40, ids.Count);
        Assert.Equal(40, ids.Distinct().Count());

        using var ana = app.ClientWithToken(token);
        var first = claimed.SelectMany(c => c).OrderBy(r => r.Number).First();
        var put = new HttpRequestMessage(HttpMethod.Put, $"/api/runs/{first.Id}/result")
        {
            Content = new StringContent("""{"state":"done","values":{"thermal_resistance":0.4,"pressure_drop":30,"mass":100}}""", Encoding.UTF8, "application/json"),
        };
        put.Headers.Add("Idempotency-Key", "sqlite-1");
        Assert.Equal(HttpStatusCode.OK, (await ana.SendAsync(put)).StatusCode);

        var form = new MultipartFormDataContent();
        var file = new ByteArrayContent(Encoding.UTF8.GetBytes("run;thermal_resistance;pressure_drop;mass\n2;0,41;31;101\n3;0,42;32;102\n"));
        file.Headers.ContentType = new MediaTypeHeaderValue("text/csv");
        form.Add(file, "file", "two.csv");
        var bulk = await ana.PostAsync($"/api/studies/{study.Id}/results", form);
        Assert.Equal(HttpStatusCode.OK, bulk.StatusCode);
        Assert.Equal(2, (await bulk.ReadAsync<BulkUploadReport>()).Accepted);

        var export = await ana.GetStringAsync($"/api/studies/{study.Id}/export?format=csv");
        Assert.Contains("\n2,1,done,", export, StringComparison.Ordinal);

        clock.Advance(TimeSpan.FromHours(25));
        Assert.Equal(37, await app.Services.GetRequiredService<LeaseSweeper>().SweepAsync(CancellationToken.None));
        await using var db = app.Db();
        Assert.Equal(3, await db.Runs.CountAsync(r => r.StudyId == study.Id && r.State == RunState.Done));
        Assert.Equal(97, await db.Runs.CountAsync(r => r.StudyId == study.Id && r.State == RunState.Open));
    }
}
