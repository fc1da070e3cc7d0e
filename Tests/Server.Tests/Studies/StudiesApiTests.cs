using System.Net;
using System.Text;
using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Studies;

/// <summary>The first slice of the API (DESIGN.md §5) through the real host on PostgreSQL.</summary>
public sealed class StudiesApiTests : IAsyncLifetime
{
    private RunfoldApp _app = null!;

    public async Task InitializeAsync() => _app = await RunfoldApp.StartAsync();

    public async Task DisposeAsync() => await _app.DisposeAsync();

    private static CreateStudyRequest ThreeFactorStudy(string name = "Fin trial") => new(
        name,
        [
            new FactorSpec("fin_height", FactorKind.Continuous, 20, 60, Unit: "mm"),
            new FactorSpec("fin_count", FactorKind.Integer, 10, 40),
            new FactorSpec("alloy", FactorKind.Categorical, Levels: ["6063", "copper"]),
        ],
        [new ResponseSpec("thermal_resistance", ResponseGoal.Minimize, Unit: "K/W")],
        new DesignSpec(DesignMethod.FullFactorial, Levels: [2, 3, 2]));

    [Fact]
    public async Task A_2x3x2_full_factorial_gives_12_runs_with_the_right_factor_values()
    {
        using var client = _app.AdminClient();
        var response = await client.PostJsonAsync("/api/studies", ThreeFactorStudy());

        Assert.Equal(HttpStatusCode.Created, response.StatusCode);
        var study = await response.ReadAsync<StudyDetail>();
        Assert.Equal($"/api/studies/{study.Id}", response.Headers.Location?.OriginalString);
        Assert.Equal(12, study.Counts.Total);
        Assert.Equal(12, study.Counts.Open);
        var runs = study.Runs!;
        Assert.Equal(Enumerable.Range(1, 12), runs.Select(r => r.Number));
        Assert.All(runs, r => Assert.Equal((1, RunState.Open), (r.Wave, r.State)));

        // Standard order, first factor fastest: fin_height {20, 60}, fin_count {10, 25, 40}, alloy {6063, copper}.
        var expected = new List<string>();
        foreach (var alloy in new[] { "6063", "copper" })
            foreach (var count in new[] { 10, 25, 40 })
                foreach (var height in new[] { 20, 60 })
                    expected.Add($"{height}|{count}|{alloy}");
        Assert.Equal(expected, runs.Select(r => $"{r.Factors["fin_height"]}|{r.Factors["fin_count"]}|{r.Factors["alloy"]}"));

        var listed = await (await client.GetAsync($"/api/studies/{study.Id}/runs")).ReadAsync<List<RunDto>>();
        Assert.Equal(runs.Select(r => (r.Id, r.Number)), listed.Select(r => (r.Id, r.Number)));
        var open = await (await client.GetAsync($"/api/studies/{study.Id}/runs?state=open")).ReadAsync<List<RunDto>>();
        Assert.Equal(12, open.Count);
        var done = await (await client.GetAsync($"/api/studies/{study.Id}/runs?state=done")).ReadAsync<List<RunDto>>();
        Assert.Empty(done);
    }

    [Fact]
    public async Task The_runs_answer_uses_the_documented_json_shape()
    {
        using var client = _app.AdminClient();
        var created = await (await client.PostJsonAsync("/api/studies", ThreeFactorStudy("Shape"))).ReadAsync<StudyDetail>();
        using var json = JsonDocument.Parse(await client.GetStringAsync($"/api/studies/{created.Id}/runs"));
        var first = json.RootElement[0];
        Assert.Equal("open", first.GetProperty("state").GetString());
        Assert.Equal(20, first.GetProperty("factors").GetProperty("fin_height").GetDouble());
        Assert.Equal("6063", first.GetProperty("factors").GetProperty("alloy").GetString());
        Assert.False(first.TryGetProperty("result", out _), "A run without a result has no result field.");

        using var detail = JsonDocument.Parse(await client.GetStringAsync($"/api/studies/{created.Id}"));
        Assert.Equal("categorical", detail.RootElement.GetProperty("factors")[2].GetProperty("kind").GetString());
        Assert.Equal("fullFactorial", detail.RootElement.GetProperty("design").GetProperty("method").GetString());
        Assert.Equal("lead", detail.RootElement.GetProperty("members")[0].GetProperty("role").GetString());
        Assert.Equal(12, detail.RootElement.GetProperty("counts").GetProperty("total").GetInt32());
    }

    [Fact]
    public async Task The_study_list_shows_counts_by_state()
    {
        using var client = _app.AdminClient();
        var created = await (await client.PostJsonAsync("/api/studies", ThreeFactorStudy("Listed"))).ReadAsync<StudyDetail>();
        var list = await (await client.GetAsync("/api/studies")).ReadAsync<List<StudySummary>>();
        var item = Assert.Single(list, s => s.Id == created.Id);
        Assert.Equal(("Listed", 12, 12), (item.Name, item.Counts.Open, item.Counts.Total));
    }

    [Theory]
    [InlineData(null)]
    [InlineData("rf_not_a_real_token")]
    public async Task Without_a_valid_token_the_api_answers_401_problem_details(string? token)
    {
        using var client = _app.ClientWithToken(token);
        foreach (var request in new[]
                 {
                     new HttpRequestMessage(HttpMethod.Get, "/api/studies"),
                     new HttpRequestMessage(HttpMethod.Get, "/api/studies/1/runs"),
                     new HttpRequestMessage(HttpMethod.Post, "/api/studies") { Content = JsonBody(ThreeFactorStudy()) },
                 })
        {
            var response = await client.SendAsync(request);
            Assert.Equal(HttpStatusCode.Unauthorized, response.StatusCode);
            Assert.Equal("application/problem+json", response.Content.Headers.ContentType?.MediaType);
            using var problem = JsonDocument.Parse(await response.Content.ReadAsStringAsync());
            Assert.Equal(401, problem.RootElement.GetProperty("status").GetInt32());
            Assert.Contains("Authorization: Bearer", problem.RootElement.GetProperty("detail").GetString());
        }
        await using var db = _app.Db();
        Assert.Equal(0, await db.Studies.CountAsync(s => s.Name == "Fin trial"));
    }

    public static TheoryData<string, string, int, string, string> BadBodies => new()
    {
        // body, description, status, field, words in the message
        { """{"name":"x","factors":[],"responses":[{"name":"y"}],"design":{"method":"fullFactorial"}}""", "no factors", 400, "factors", "at least one factor" },
        { """{"name":"x","factors":[{"name":"a","low":5,"high":5}],"responses":[{"name":"y"}],"design":{"method":"fullFactorial"}}""", "low = high", 400, "factors[0].high", "greater than its low" },
        { """{"name":"x","factors":[{"name":"a","low":9,"high":1}],"responses":[{"name":"y"}],"design":{"method":"fullFactorial"}}""", "low > high", 400, "factors[0].high", "greater than its low" },
        { """{"name":"x","factors":[{"name":"a","low":0,"high":1},{"name":"A","low":0,"high":1}],"responses":[{"name":"y"}],"design":{"method":"fullFactorial"}}""", "duplicate factor names", 400, "factors[1].name", "unique" },
        { """{"name":"  ","factors":[{"name":"a","low":0,"high":1}],"responses":[{"name":"y"}],"design":{"method":"fullFactorial"}}""", "empty name", 400, "name", "needs a name" },
        { """{"name":"x","factors":[{"name":"a","low":"NaN","high":1}],"responses":[{"name":"y"}],"design":{"method":"fullFactorial"}}""", "NaN low", 400, "factors[0].low", "finite number" },
        { """{"name":"x","factors":[{"name":"a","low":0,"high":"Infinity"}],"responses":[{"name":"y"}],"design":{"method":"fullFactorial"}}""", "infinite high", 400, "factors[0].high", "finite number" },
        { """{"name":"x","factors":[{"name":"a","low":NaN,"high":1}],"responses":[{"name":"y"}],"design":{"method":"fullFactorial"}}""", "bare NaN (not JSON)", 400, "factors[0].low", "could not be read" },
        { """{"name":"x","factors":[{"name":"a","low":"low","high":1}],"responses":[{"name":"y"}],"design":{"method":"fullFactorial"}}""", "text for a number", 400, "factors[0].low", "could not be read" },
        { """{"name":"x","factors":[{"name":"a","low":0,"high":1}],"responses":[],"design":{"method":"fullFactorial"}}""", "no responses", 400, "responses", "at least one response" },
        { """{"name":"x","factors":[{"name":"a","low":0,"high":1}],"responses":[{"name":"y"}]}""", "no design", 400, "design", "needs a design" },
        { """{"name":"x","factors":[{"name":"a","kind":"categorical","levels":["only"]}],"responses":[{"name":"y"}],"design":{"method":"fullFactorial"}}""", "one level", 400, "factors[0].levels", "at least two levels" },
        { """{"name":"x","factors":[{"name":"a","low":-1,"high":1,"scale":"log"}],"responses":[{"name":"y"}],"design":{"method":"fullFactorial"}}""", "log with low <= 0", 400, "factors[0].low", "positive low" },
        { """{"name":"x","factors":[{"name":"a","low":0,"high":1},{"name":"b","low":0,"high":1},{"name":"c","low":0,"high":1},{"name":"d","low":0,"high":1},{"name":"e","low":0,"high":1},{"name":"f","low":0,"high":1},{"name":"g","low":0,"high":1}],"responses":[{"name":"y"}],"design":{"method":"fullFactorial","levels":[10]}}""", "10^7 runs", 422, "design", "10,000,000 runs" },
    };

    [Theory]
    [MemberData(nameof(BadBodies))]
    public async Task A_bad_body_is_refused_with_a_sentence_naming_the_field_and_nothing_is_stored(
        string body, string description, int status, string field, string words)
    {
        using var client = _app.AdminClient();
        await using var before = _app.Db();
        var studies = await before.Studies.CountAsync();
        var runs = await before.Runs.CountAsync();

        var response = await client.PostAsync("/api/studies", new StringContent(body, Encoding.UTF8, "application/json"));

        Assert.True(status == (int)response.StatusCode, $"{description}: expected {status}, got {(int)response.StatusCode}");
        Assert.Equal("application/problem+json", response.Content.Headers.ContentType?.MediaType);
        using var problem = JsonDocument.Parse(await response.Content.ReadAsStringAsync());
        var errors = problem.RootElement.GetProperty("errors");
        Assert.True(errors.TryGetProperty(field, out var messages), $"{description}: no error for '{field}' in {errors}");
        Assert.Contains(words, string.Join(" ", messages.EnumerateArray().Select(m => m.GetString())), StringComparison.OrdinalIgnoreCase);
        Assert.False(string.IsNullOrWhiteSpace(problem.RootElement.GetProperty("detail").GetString()));

        await using var after = _app.Db();
        Assert.Equal(studies, await after.Studies.CountAsync());
        Assert.Equal(runs, await after.Runs.CountAsync());
    }

    [Fact]
    public async Task An_unknown_study_is_404_and_an_unknown_state_is_400()
    {
        using var client = _app.AdminClient();
        var missing = await client.GetAsync("/api/studies/987654");
        Assert.Equal(HttpStatusCode.NotFound, missing.StatusCode);
        Assert.Contains("no study 987654", await missing.Content.ReadAsStringAsync(), StringComparison.Ordinal);

        var created = await (await client.PostJsonAsync("/api/studies", ThreeFactorStudy("States"))).ReadAsync<StudyDetail>();
        var bad = await client.GetAsync($"/api/studies/{created.Id}/runs?state=finished");
        Assert.Equal(HttpStatusCode.BadRequest, bad.StatusCode);
        Assert.Contains("open, claimed, done or failed", await bad.Content.ReadAsStringAsync(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task Errors_the_framework_raises_itself_are_problem_details_with_a_sentence()
    {
        using var client = _app.AdminClient();
        foreach (var (request, status, sentence) in new (HttpRequestMessage, HttpStatusCode, string)[]
                 {
                     (new(HttpMethod.Get, "/api/no-such-thing"), HttpStatusCode.NotFound, "Nothing answers GET /api/no-such-thing; the API reference at /api-docs lists every address."),
                     (new(HttpMethod.Delete, "/api/studies"), HttpStatusCode.MethodNotAllowed, "/api/studies does not take DELETE; the API reference at /api-docs says what it takes."),
                 })
        {
            var response = await client.SendAsync(request);
            Assert.Equal(status, response.StatusCode);
            Assert.Equal("application/problem+json", response.Content.Headers.ContentType?.MediaType);
            using var problem = JsonDocument.Parse(await response.Content.ReadAsStringAsync());
            Assert.Equal(sentence, problem.RootElement.GetProperty("detail").GetString());
            Assert.Equal((int)status, problem.RootElement.GetProperty("status").GetInt32());
        }
        // A service's own sentence is kept.
        var missing = await client.GetAsync("/api/studies/987654");
        using var own = JsonDocument.Parse(await missing.Content.ReadAsStringAsync());
        Assert.Contains("no study 987654", own.RootElement.GetProperty("detail").GetString(), StringComparison.Ordinal);
    }

    [Theory]
    [InlineData(500)]
    [InlineData(503)]
    public void A_server_failure_says_the_request_was_not_completed(int status) =>
        Assert.StartsWith("Something went wrong on the server and the request was not completed", Runfold.Server.Hosting.ProblemSentences.For(status, "PUT", "/api/runs/1/result"), StringComparison.Ordinal);

    [Fact]
    public async Task Health_reports_the_database()
    {
        using var client = _app.ClientWithToken(null);
        var response = await client.GetAsync("/health");
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        Assert.Equal("healthy", JsonDocument.Parse(await response.Content.ReadAsStringAsync()).RootElement.GetProperty("status").GetString());
    }

    [Fact]
    public async Task The_OpenAPI_document_and_the_reference_page_are_served()
    {
        using var client = _app.ClientWithToken(null);
        using var document = JsonDocument.Parse(await client.GetStringAsync("/openapi/v1.json"));
        Assert.True(document.RootElement.GetProperty("paths").TryGetProperty("/api/studies/{id}/runs", out _));
        Assert.True(document.RootElement.GetProperty("components").GetProperty("securitySchemes").TryGetProperty("Bearer", out _));
        var page = await client.GetAsync("/api-docs/");
        Assert.Equal(HttpStatusCode.OK, page.StatusCode);
        Assert.Contains("Runfold API", await page.Content.ReadAsStringAsync(), StringComparison.Ordinal);
    }

    private static StringContent JsonBody<T>(T value) =>
        new(JsonSerializer.Serialize(value, RunfoldJson.Options), Encoding.UTF8, "application/json");
}
