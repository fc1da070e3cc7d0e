using System.Net;
using System.Net.Http.Json;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Analysis;

public sealed class AnalysisRoleFixture : IAsyncLifetime
{
    public RunfoldApp App { get; private set; } = null!;

    public StudyDetail Study { get; private set; } = null!;

    public Dictionary<string, string?> Tokens { get; } = new();

    public async Task InitializeAsync()
    {
        App = await RunfoldApp.StartAsync();
        Study = await TestTeam.CreateStudyAsync(App, AnalysisKit.Study("Analysis roles"));
        foreach (var (name, role) in new (string, StudyRole?)[] { ("lena", StudyRole.Lead), ("ana", StudyRole.Analyst), ("vik", StudyRole.Viewer), ("olga", null) })
        {
            Tokens[name] = await TestTeam.PersonAsync(App, name);
            if (role is { } r) await TestTeam.JoinAsync(App, Study.Id, name, r);
        }
        Tokens["anonymous"] = null;
        using var admin = App.AdminClient();
        foreach (var run in Study.Runs!.Take(6)) await AnalysisKit.PostAsync(admin, run);
        var version = await AnalysisKit.ResultSetVersionAsync(App, Study.Id);
        await AnalysisKit.WaitForAsync(admin, Study.Id, s => s.ResultSetVersion == version, "of the six results");
    }

    public async Task DisposeAsync() => await App.DisposeAsync();
}

/// <summary>Viewers read the analysis, predict and follow the study; only the lead adds waves; outsiders do not
/// learn the study exists (404); without a token nothing (401).</summary>
public sealed class AnalysisRoleTests(AnalysisRoleFixture fixture) : IClassFixture<AnalysisRoleFixture>
{
    // Who:        lead, analyst, viewer, outsider, anonymous.
    public static TheoryData<string, int, int, int, int, int> Matrix => new()
    {
        { "GET analysis", 200, 200, 200, 404, 401 },
        { "GET analysis history", 200, 200, 200, 404, 401 },
        { "POST predict", 200, 200, 200, 404, 401 },
        { "POST waves", 201, 403, 403, 404, 401 },
        { "GET events", 200, 200, 200, 404, 401 },
    };

    private static readonly string[] Who = ["lena", "ana", "vik", "olga", "anonymous"];

    [Theory]
    [MemberData(nameof(Matrix))]
    public async Task Every_analysis_endpoint_checks_the_role(string endpoint, int lead, int analyst, int viewer, int outsider, int anonymous)
    {
        int[] expected = [lead, analyst, viewer, outsider, anonymous];
        var failures = new List<string>();
        for (var i = 0; i < Who.Length; i++)
        {
            using var client = fixture.App.ClientWithToken(fixture.Tokens[Who[i]]);
            using var request = Request(endpoint);
            using var response = await client.SendAsync(request, HttpCompletionOption.ResponseHeadersRead);
            if ((int)response.StatusCode != expected[i])
                failures.Add($"{Who[i]}: expected {expected[i]}, got {(int)response.StatusCode} {await response.Content.ReadAsStringAsync()}");
            else if (expected[i] >= 400)
                Assert.Equal("application/problem+json", response.Content.Headers.ContentType?.MediaType);
        }
        Assert.True(failures.Count == 0, $"{endpoint}:\n" + string.Join("\n", failures));
    }

    private HttpRequestMessage Request(string endpoint)
    {
        var study = $"/api/studies/{fixture.Study.Id}";
        return endpoint switch
        {
            "GET analysis" => new(HttpMethod.Get, study + "/analysis"),
            "GET analysis history" => new(HttpMethod.Get, study + "/analysis/history"),
            "POST predict" => new(HttpMethod.Post, study + "/predict")
            {
                Content = JsonContent.Create(new PredictRequest([new Dictionary<string, FactorValue> { ["fin_height"] = FactorValue.Of(30), ["air_velocity"] = FactorValue.Of(2) }]), options: RunfoldJson.Options),
            },
            "POST waves" => new(HttpMethod.Post, study + "/waves") { Content = JsonContent.Create(new WaveRequest("augment", Count: 1), options: RunfoldJson.Options) },
            "GET events" => new(HttpMethod.Get, study + "/events"),
            _ => throw new ArgumentOutOfRangeException(nameof(endpoint), endpoint, null),
        };
    }
}
