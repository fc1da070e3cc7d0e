using System.Net;
using System.Text;
using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Results;

/// <summary>PUT /api/runs/{id}/result: revisions, idempotent retries, checks against the responses, failed runs
/// and reopening them.</summary>
public sealed class ResultUploadTests : IAsyncLifetime
{
    private RunfoldApp _app = null!;
    private StudyDetail _study = null!;
    private HttpClient _ana = null!;
    private HttpClient _ben = null!;

    public async Task InitializeAsync()
    {
        _app = await RunfoldApp.StartAsync();
        _study = await TestTeam.CreateStudyAsync(_app, TestTeam.HeatSinkStudy("Results"));
        _ana = _app.ClientWithToken(await TestTeam.PersonAsync(_app, "ana"));
        _ben = _app.ClientWithToken(await TestTeam.PersonAsync(_app, "ben"));
        await TestTeam.JoinAsync(_app, _study.Id, "ana", StudyRole.Analyst);
        await TestTeam.JoinAsync(_app, _study.Id, "ben", StudyRole.Analyst);
    }

    public async Task DisposeAsync()
    {
        _ana.Dispose();
        _ben.Dispose();
        await _app.DisposeAsync();
    }

    private async Task<RunDto> ClaimAsync(HttpClient client) =>
        Assert.Single(await (await client.PostJsonAsync($"/api/studies/{_study.Id}/claims", new ClaimRequest(1))).ReadAsync<List<RunDto>>());

    private static Task<HttpResponseMessage> PutAsync(HttpClient client, int runId, string json, string? key = null)
    {
        var request = new HttpRequestMessage(HttpMethod.Put, $"/api/runs/{runId}/result") { Content = new StringContent(json, Encoding.UTF8, "application/json") };
        if (key is not null) request.Headers.Add("Idempotency-Key", key);
        return client.SendAsync(request);
    }

    private const string Done = """{"state":"done","values":{"thermal_resistance":0.42,"pressure_drop":31.5,"mass":118},"note":"mesh 3","solverSeconds":5400}""";

    [Fact]
    public async Task A_retry_with_the_same_key_returns_the_same_revision_and_stores_nothing_new()
    {
        var run = await ClaimAsync(_ana);
        var first = await PutAsync(_ana, run.Id, Done, "job-4711");
        Assert.Equal(HttpStatusCode.OK, first.StatusCode);
        var receipt = await first.ReadAsync<ResultReceipt>();
        Assert.Equal((1, RunState.Done, false), (receipt.Revision, receipt.State, receipt.Replayed));
        long version;
        await using (var db = _app.Db()) version = (await db.Studies.SingleAsync(s => s.Id == _study.Id)).ResultSetVersion;

        var retry = await PutAsync(_ana, run.Id, Done, "job-4711");
        Assert.Equal(HttpStatusCode.OK, retry.StatusCode);
        Assert.Equal("true", retry.Headers.GetValues("Idempotency-Replayed").Single());
        Assert.Equal((1, true), ((await retry.ReadAsync<ResultReceipt>()).Revision, true));

        var reused = await PutAsync(_ana, run.Id, Done.Replace("0.42", "0.43", StringComparison.Ordinal), "job-4711");
        Assert.Equal(HttpStatusCode.UnprocessableEntity, reused.StatusCode);
        Assert.Contains("already used", await reused.Content.ReadAsStringAsync(), StringComparison.Ordinal);

        await using var after = _app.Db();
        Assert.Equal(1, await after.ResultRevisions.CountAsync(v => v.RunId == run.Id));
        Assert.Equal(version, (await after.Studies.SingleAsync(s => s.Id == _study.Id)).ResultSetVersion);
        Assert.Single(await TestTeam.EventsAsync(_app, _study.Id, "result.stored"));
    }

    [Fact]
    public async Task Concurrent_retries_with_one_key_store_one_revision()
    {
        var run = await ClaimAsync(_ana);
        var answers = await Task.WhenAll(Enumerable.Range(0, 8).Select(_ => PutAsync(_ana, run.Id, Done, "job-race")));
        Assert.All(answers, a => Assert.Equal(HttpStatusCode.OK, a.StatusCode));
        var revisions = await Task.WhenAll(answers.Select(a => a.ReadAsync<ResultReceipt>()));
        Assert.All(revisions, r => Assert.Equal(1, r.Revision));
        await using var db = _app.Db();
        Assert.Equal(1, await db.ResultRevisions.CountAsync(v => v.RunId == run.Id));
    }

    [Fact]
    public async Task Every_upload_is_a_new_revision_the_newest_is_current_and_the_history_is_visible()
    {
        var run = await ClaimAsync(_ana);
        await PutAsync(_ana, run.Id, Done, "a");
        var second = await PutAsync(_ana, run.Id, Done.Replace("0.42", "0.40", StringComparison.Ordinal), "b");
        Assert.Equal(2, (await second.ReadAsync<ResultReceipt>()).Revision);

        var history = await (await _ben.GetAsync($"/api/runs/{run.Id}")).ReadAsync<RunHistory>();
        Assert.Equal([2, 1], history.Revisions.Select(r => r.Revision));
        Assert.Equal([true, false], history.Revisions.Select(r => r.Current));
        Assert.Equal(0.40, history.Run.Result!.Values["thermal_resistance"]);
        Assert.Equal(2, history.Run.Result.Revision);
        Assert.All(history.Revisions, r => Assert.Equal(("ana", "API token 'tests'"), (r.Author, r.Via)));
        Assert.Equal(5400, history.Revisions[0].SolverSeconds);
    }

    public static TheoryData<string, string, string> BadValues => new()
    {
        // body, field, words in its message
        { """{"state":"done","values":{"thermal_resistance":0.4,"pressure_drop":30,"mass":100,"fin_temp":80}}""", "values.fin_temp", "not a response" },
        { """{"state":"done","values":{"thermal_resistance":0.4,"pressure_drop":30}}""", "values.mass", "missing" },
        { """{"state":"done","values":{"thermal_resistance":"NaN","pressure_drop":30,"mass":100}}""", "values.thermal_resistance", "NaN" },
        { """{"state":"done","values":{"thermal_resistance":0.4,"pressure_drop":"Infinity","mass":100}}""", "values.pressure_drop", "infinite" },
        { """{"state":"done","values":{"thermal_resistance":0.4,"pressure_drop":30,"mass":"heavy"}}""", "values.mass", "'heavy' is not a number" },
        { """{"state":"done","values":{"thermal_resistance":0.4,"pressure_drop":30,"mass":true}}""", "values.mass", "not a number" },
        { """{"state":"failed","values":{}}""", "note", "reason" },
        { """{"state":"open","values":{}}""", "state", "done or failed" },
        { """{"state":"done","values":{"thermal_resistance":0.4,"pressure_drop":30,"mass":100},"solverSeconds":-5}""", "solverSeconds", "non-negative" },
    };

    [Theory]
    [MemberData(nameof(BadValues))]
    public async Task A_result_that_does_not_fit_the_responses_is_422_naming_the_field_and_nothing_is_stored(string body, string field, string words)
    {
        var run = await ClaimAsync(_ana);
        var response = await PutAsync(_ana, run.Id, body, "k1");
        Assert.Equal(HttpStatusCode.UnprocessableEntity, response.StatusCode);
        Assert.Equal("application/problem+json", response.Content.Headers.ContentType?.MediaType);
        using var problem = JsonDocument.Parse(await response.Content.ReadAsStringAsync());
        Assert.True(problem.RootElement.GetProperty("errors").TryGetProperty(field, out var messages), $"no error for {field}: {problem.RootElement}");
        Assert.Contains(words, string.Join(" ", messages.EnumerateArray().Select(m => m.GetString())), StringComparison.OrdinalIgnoreCase);
        await using var db = _app.Db();
        Assert.Equal(0, await db.ResultRevisions.CountAsync(v => v.RunId == run.Id));
        Assert.Equal(RunState.Claimed, (await db.Runs.SingleAsync(r => r.Id == run.Id)).State);
    }

    [Fact]
    public async Task Only_the_claim_holder_or_the_lead_may_post()
    {
        var run = await ClaimAsync(_ana);
        var foreign = await PutAsync(_ben, run.Id, Done);
        Assert.Equal(HttpStatusCode.Forbidden, foreign.StatusCode);
        Assert.Contains("held by ana", await foreign.Content.ReadAsStringAsync(), StringComparison.Ordinal);
        using var lead = _app.AdminClient();
        Assert.Equal(HttpStatusCode.OK, (await PutAsync(lead, run.Id, Done)).StatusCode);
        var open = (await (await _ben.GetAsync($"/api/studies/{_study.Id}/runs?state=open")).ReadAsync<List<RunDto>>())[0];
        Assert.Equal(HttpStatusCode.Forbidden, (await PutAsync(_ben, open.Id, Done)).StatusCode);
    }

    [Fact]
    public async Task A_failed_run_is_kept_with_its_reason_bumps_the_result_set_and_can_be_reopened()
    {
        var run = await ClaimAsync(_ana);
        long before;
        await using (var db = _app.Db()) before = (await db.Studies.SingleAsync(s => s.Id == _study.Id)).ResultSetVersion;
        var failed = await PutAsync(_ana, run.Id, """{"state":"failed","note":"solver diverged at iteration 800"}""");
        Assert.Equal(HttpStatusCode.OK, failed.StatusCode);
        var listed = (await (await _ana.GetAsync($"/api/studies/{_study.Id}/runs?state=failed")).ReadAsync<List<RunDto>>()).Single();
        Assert.Equal("solver diverged at iteration 800", listed.Result!.Note);
        Assert.Equal(HttpStatusCode.Conflict, (await _ana.PostAsync($"/api/runs/{_study.Runs![5].Id}/reopen", null)).StatusCode);

        var reopened = await _ana.PostAsync($"/api/runs/{run.Id}/reopen", null);
        Assert.Equal(HttpStatusCode.OK, reopened.StatusCode);
        var open = await reopened.ReadAsync<RunDto>();
        Assert.Equal((RunState.Open, (string?)null, (RunResultDto?)null), (open.State, open.Assignee, open.Result));
        var history = await (await _ana.GetAsync($"/api/runs/{run.Id}")).ReadAsync<RunHistory>();
        Assert.Equal(RunState.Failed, Assert.Single(history.Revisions).State);
        Assert.False(history.Revisions[0].Current);

        // Claimed again and done: revision 2.
        var again = await ClaimAsync(_ben);
        Assert.Equal(run.Id, again.Id);
        Assert.Equal(2, (await (await PutAsync(_ben, run.Id, Done)).ReadAsync<ResultReceipt>()).Revision);
        await using var after = _app.Db();
        Assert.Equal(before + 3, (await after.Studies.SingleAsync(s => s.Id == _study.Id)).ResultSetVersion); // failed, reopened, done
        Assert.Single(await TestTeam.EventsAsync(_app, _study.Id, "run.reopened"));
    }
}
