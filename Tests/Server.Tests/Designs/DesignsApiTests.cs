using System.Net;
using System.Text;
using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Designs;

/// <summary>POST /api/designs/preview and study creation with every design method, through the real host on
/// PostgreSQL. The numbers themselves are checked against their sources in Shared.Tests/Doe.</summary>
public sealed class DesignsApiTests : IAsyncLifetime
{
    private RunfoldApp _app = null!;

    public async Task InitializeAsync() => _app = await RunfoldApp.StartAsync();

    public async Task DisposeAsync() => await _app.DisposeAsync();

    private const string HeatSinkFactors = """
        [{"name":"fin_height","low":20,"high":60,"unit":"mm"},
         {"name":"fin_thickness","low":0.8,"high":2.5,"unit":"mm"},
         {"name":"fin_count","kind":"integer","low":10,"high":40},
         {"name":"base_width","low":40,"high":120,"unit":"mm"}]
        """;

    private const string FinBudget = "fin_thickness * fin_count <= 0.6 * base_width";

    public static TheoryData<string, int> EveryMethod => new()
    {
        { """{"method":"fullFactorial","levels":[3,2,2,2]}""", 24 },
        { """{"method":"fractionalFactorial","resolution":4}""", 8 },
        { """{"method":"centralComposite","variant":"faceCentered"}""", 25 },
        { """{"method":"boxBehnken"}""", 25 },
        { """{"method":"latinHypercube","runs":20,"seed":3}""", 20 },
        { """{"method":"latinHypercube","runs":20,"maximin":false}""", 20 },
        { """{"method":"sobol","runs":16,"scramble":true,"seed":5}""", 16 },
        { """{"method":"dOptimal","model":"interactions","runs":14}""", 14 },
    };

    [Theory]
    [MemberData(nameof(EveryMethod))]
    public async Task The_preview_serves_every_method_with_runs_and_metrics(string design, int runs)
    {
        using var client = _app.AdminClient();
        using var answer = await PreviewAsync(client, design, HttpStatusCode.OK);
        var root = answer.RootElement;
        Assert.Equal(runs, root.GetProperty("runs").GetArrayLength());
        var first = root.GetProperty("runs")[0].GetProperty("factors");
        Assert.Equal(JsonValueKind.Number, first.GetProperty("fin_height").ValueKind);
        var metrics = root.GetProperty("metrics");
        Assert.Equal(runs, metrics.GetProperty("runs").GetInt32());
        Assert.True(metrics.GetProperty("levels").GetProperty("fin_count").GetInt32() >= 2);
        Assert.True(metrics.GetProperty("minDistance").GetDouble() > 0);
        Assert.True(metrics.GetProperty("centeredL2Discrepancy").GetDouble() > 0);
        Assert.InRange(metrics.GetProperty("maxAbsCorrelation").GetDouble(), 0, 1);
        Assert.True(metrics.GetProperty("dEfficiency").GetDouble() > 0);
        Assert.True(metrics.GetProperty("conditionNumber").GetDouble() >= 1);
        Assert.True(root.GetProperty("staysInsideRanges").GetBoolean());
        Assert.NotEqual(0, root.GetProperty("notes").GetArrayLength());
    }

    [Fact]
    public async Task A_fraction_reports_its_resolution_and_aliases_and_a_composite_says_whether_it_stays_inside()
    {
        using var client = _app.AdminClient();
        using var fraction = await PreviewAsync(client, """{"method":"fractionalFactorial","resolution":4}""", HttpStatusCode.OK);
        var summary = fraction.RootElement.GetProperty("fraction");
        Assert.Equal(4, summary.GetProperty("resolution").GetInt32());
        Assert.Equal("base_width = fin_height*fin_thickness*fin_count", summary.GetProperty("generators")[0].GetString());
        var chain = summary.GetProperty("aliases").EnumerateArray().Single(a => a.GetProperty("effect").GetString() == "fin_height*fin_thickness");
        Assert.Equal("fin_count*base_width", chain.GetProperty("aliasedWith")[0].GetString());

        using var outside = await PreviewAsync(client, """{"method":"centralComposite"}""", HttpStatusCode.OK);
        Assert.False(outside.RootElement.GetProperty("staysInsideRanges").GetBoolean());
        var composite = outside.RootElement.GetProperty("composite");
        Assert.Equal("circumscribed", composite.GetProperty("variant").GetString());
        Assert.False(composite.GetProperty("staysInsideRanges").GetBoolean());
        Assert.Equal(2.0, composite.GetProperty("alpha").GetDouble(), 9);
        Assert.Contains("OUTSIDE the factor ranges", composite.GetProperty("note").GetString(), StringComparison.Ordinal);

        using var inside = await PreviewAsync(client, """{"method":"centralComposite","variant":"inscribed"}""", HttpStatusCode.OK);
        Assert.True(inside.RootElement.GetProperty("composite").GetProperty("staysInsideRanges").GetBoolean());
    }

    [Fact]
    public async Task Runs_that_break_a_constraint_are_listed_for_Box_Behnken_and_avoided_by_space_filling_designs()
    {
        using var client = _app.AdminClient();
        using var bbd = await PreviewAsync(client, $$"""{"method":"boxBehnken","constraints":["{{FinBudget}}"]}""", HttpStatusCode.OK);
        var violations = bbd.RootElement.GetProperty("constraintViolations");
        Assert.NotEqual(0, violations.GetArrayLength());
        foreach (var v in violations.EnumerateArray())
        {
            var run = bbd.RootElement.GetProperty("runs")[v.GetProperty("run").GetInt32() - 1].GetProperty("factors");
            Assert.True(run.GetProperty("fin_thickness").GetDouble() * run.GetProperty("fin_count").GetDouble() > 0.6 * run.GetProperty("base_width").GetDouble());
            Assert.Equal(FinBudget, v.GetProperty("constraints")[0].GetString());
        }
        Assert.Contains(bbd.RootElement.GetProperty("warnings").EnumerateArray(), w => w.GetString()!.Contains("break the constraints", StringComparison.Ordinal));

        using var lhs = await PreviewAsync(client, $$"""{"method":"latinHypercube","runs":25,"constraints":["{{FinBudget}}"]}""", HttpStatusCode.OK);
        Assert.Equal(0, lhs.RootElement.GetProperty("constraintViolations").GetArrayLength());
    }

    public static TheoryData<string, string, int, string, string> BadRequests => new()
    {
        // factors, design, status, field, words
        { "[]", """{"method":"sobol"}""", 400, "factors", "at least one factor" },
        { """[{"name":"a","low":1,"high":0}]""", """{"method":"sobol"}""", 400, "factors[0].high", "greater than its low" },
        { """[{"name":"a","low":0,"high":1,"scale":"log"}]""", """{"method":"sobol"}""", 400, "factors[0].low", "positive low" },
        { """[{"name":"a","low":"NaN","high":1}]""", """{"method":"sobol"}""", 400, "factors[0].low", "finite number" },
        { HeatSinkFactors, """{"method":"centralComposite","alpha":-1}""", 400, "design.alpha", "positive finite" },
        { HeatSinkFactors, """{"method":"dOptimal","model":"cubic"}""", 400, "design.model", "linear, interactions or quadratic" },
        { HeatSinkFactors, """{"method":"sobol","constraints":["fin_thickness * fin_cuont <= 3"]}""", 400, "design.constraints[0]", "'fin_cuont' is not a factor" },
        { HeatSinkFactors, """{"method":"sobol","runs":20000}""", 422, "design", "needs 20,000 runs" },
        { HeatSinkFactors, """{"method":"fullFactorial","levels":[30]}""", 422, "design", "810,000 runs" },
        { HeatSinkFactors, """{"method":"latinHypercube","constraints":["fin_height >= 2 * base_width"]}""", 422, "design.constraints", "No run within the factor ranges" },
    };

    [Theory]
    [MemberData(nameof(BadRequests))]
    public async Task Bad_input_is_refused_with_problem_details_naming_the_field(string factors, string design, int status, string field, string words)
    {
        using var client = _app.AdminClient();
        var response = await client.PostAsync("/api/designs/preview", Json("{\"factors\":" + factors + ",\"design\":" + design + "}"));
        Assert.Equal(status, (int)response.StatusCode);
        Assert.Equal("application/problem+json", response.Content.Headers.ContentType?.MediaType);
        using var problem = JsonDocument.Parse(await response.Content.ReadAsStringAsync());
        Assert.True(problem.RootElement.GetProperty("errors").TryGetProperty(field, out var messages), $"no error for {field}: {problem.RootElement}");
        Assert.Contains(words, messages[0].GetString(), StringComparison.Ordinal);
        Assert.False(string.IsNullOrWhiteSpace(problem.RootElement.GetProperty("detail").GetString()));
    }

    [Fact]
    public async Task The_preview_needs_a_signed_in_caller_and_stores_nothing()
    {
        await using var before = _app.Db();
        var studies = await before.Studies.CountAsync();
        using var anonymous = _app.ClientWithToken(null);
        var refused = await anonymous.PostAsync("/api/designs/preview", Json("{\"factors\":" + HeatSinkFactors + ",\"design\":{\"method\":\"sobol\"}}"));
        Assert.Equal(HttpStatusCode.Unauthorized, refused.StatusCode);

        using var client = _app.AdminClient();
        (await PreviewAsync(client, """{"method":"sobol"}""", HttpStatusCode.OK)).Dispose();
        await using var after = _app.Db();
        Assert.Equal(studies, await after.Studies.CountAsync());
        Assert.Equal(0, await after.Runs.CountAsync());
    }

    public static TheoryData<string> CreatedDesigns => new()
    {
        """{"method":"centralComposite","variant":"inscribed"}""",
        $$"""{"method":"latinHypercube","runs":24,"seed":8,"constraints":["{{FinBudget}}"]}""",
        $$"""{"method":"dOptimal","runs":18,"seed":2,"constraints":["{{FinBudget}}"]}""",
        """{"method":"sobol","runs":32,"scramble":true}""",
        """{"method":"fractionalFactorial","resolution":3}""",
        """{"method":"boxBehnken","centerPoints":2}""",
    };

    [Theory]
    [MemberData(nameof(CreatedDesigns))]
    public async Task A_study_created_with_the_method_stores_exactly_the_previewed_runs(string design)
    {
        using var client = _app.AdminClient();
        using var preview = await PreviewAsync(client, design, HttpStatusCode.OK);
        var response = await client.PostAsync("/api/studies", Json(
            """{"name":"Fin budget","responses":[{"name":"thermal_resistance","goal":"minimize","unit":"K/W"}],"factors":""" + HeatSinkFactors + ",\"design\":" + design + "}"));
        Assert.Equal(HttpStatusCode.Created, response.StatusCode);
        var study = await response.ReadAsync<StudyDetail>();
        var previewed = preview.RootElement.GetProperty("runs").EnumerateArray()
            .Select(r => string.Join("|", r.GetProperty("factors").EnumerateObject().Select(p => $"{p.Name}={p.Value.GetDouble():R}"))).ToList();
        var stored = study.Runs!.OrderBy(r => r.Number)
            .Select(r => string.Join("|", r.Factors.Select(p => $"{p.Key}={p.Value.Number:R}"))).ToList();
        Assert.Equal(previewed, stored);
        Assert.Equal(previewed.Count, study.Counts.Open);
    }

    [Fact]
    public async Task Study_creation_refuses_an_invalid_design_field_with_400_and_an_empty_region_with_422()
    {
        using var client = _app.AdminClient();
        await using var before = _app.Db();
        var studies = await before.Studies.CountAsync();
        foreach (var (design, status, field) in new[]
                 {
                     ("""{"method":"boxBehnken","centerPoints":-2}""", 400, "design.centerPoints"),
                     ("""{"method":"sobol","constraints":["fin_height ^ 2 <= 4"]}""", 400, "design.constraints[0]"),
                     ("""{"method":"dOptimal","constraints":["fin_count >= 50"]}""", 422, "design.constraints"),
                 })
        {
            var response = await client.PostAsync("/api/studies", Json(
                """{"name":"Refused","responses":[{"name":"mass"}],"factors":""" + HeatSinkFactors + ",\"design\":" + design + "}"));
            Assert.Equal(status, (int)response.StatusCode);
            using var problem = JsonDocument.Parse(await response.Content.ReadAsStringAsync());
            Assert.True(problem.RootElement.GetProperty("errors").TryGetProperty(field, out _), problem.RootElement.ToString());
        }
        await using var after = _app.Db();
        Assert.Equal(studies, await after.Studies.CountAsync());
    }

    [Fact]
    public async Task The_preview_is_in_the_OpenAPI_document()
    {
        using var client = _app.ClientWithToken(null);
        using var document = JsonDocument.Parse(await client.GetStringAsync("/openapi/v1.json"));
        Assert.True(document.RootElement.GetProperty("paths").TryGetProperty("/api/designs/preview", out _));
    }

    private static async Task<JsonDocument> PreviewAsync(HttpClient client, string design, HttpStatusCode expected)
    {
        var response = await client.PostAsync("/api/designs/preview", Json("{\"factors\":" + HeatSinkFactors + ",\"design\":" + design + "}"));
        var body = await response.Content.ReadAsStringAsync();
        Assert.True(expected == response.StatusCode, $"{(int)response.StatusCode}: {body}");
        return JsonDocument.Parse(body);
    }

    private static StringContent Json(string body) => new(body, Encoding.UTF8, "application/json");
}
