using System.Net;
using System.Net.Http.Headers;
using System.Text;
using System.Text.Json;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Auth;

/// <summary>One study, its team and someone from outside; every endpoint of the run workflow is called by each
/// role, and by the outsider, who must not even learn that the study exists (404), and anonymously (401).</summary>
public sealed class RoleMatrixFixture : IAsyncLifetime
{
    public RunfoldApp App { get; private set; } = null!;

    public StudyDetail Study { get; private set; } = null!;

    public Dictionary<string, string?> Tokens { get; } = new();

    public async Task InitializeAsync()
    {
        App = await RunfoldApp.StartAsync(extra: new Dictionary<string, string?> { ["RUNFOLD_TOKEN_PER_MINUTE"] = "100000" });
        Study = await TestTeam.CreateStudyAsync(App, TestTeam.HeatSinkStudy("Roles", 40, 10));
        foreach (var (name, role) in new[] { ("lena", StudyRole.Lead), ("ana", StudyRole.Analyst), ("ben", StudyRole.Analyst), ("vik", StudyRole.Viewer), ("olga", (StudyRole?)null) }
                     .Select(p => (p.Item1, (StudyRole?)p.Item2)))
        {
            Tokens[name] = await TestTeam.PersonAsync(App, name);
            if (role is { } r) await TestTeam.JoinAsync(App, Study.Id, name, r);
        }
        Tokens["anonymous"] = null;
        // Someone from outside leads a study of their own: being a lead elsewhere grants nothing here.
        var elsewhere = await TestTeam.CreateStudyAsync(App, TestTeam.HeatSinkStudy("Elsewhere"));
        await TestTeam.JoinAsync(App, elsewhere.Id, "olga", StudyRole.Lead);
    }

    public async Task DisposeAsync() => await App.DisposeAsync();
}

public sealed class RoleMatrixTests(RoleMatrixFixture fixture) : IClassFixture<RoleMatrixFixture>
{
    private const string Done = """{"state":"done","values":{"thermal_resistance":0.4,"pressure_drop":30,"mass":100}}""";

    // Who:        lead, analyst holding the run (ana), another analyst (ben), viewer, outsider, anonymous.
    public static TheoryData<string, int, int, int, int, int, int> Matrix => new()
    {
        { "GET study", 200, 200, 200, 200, 404, 401 },
        { "PATCH study", 200, 403, 403, 403, 404, 401 },
        { "GET runs", 200, 200, 200, 200, 404, 401 },
        { "POST claims", 200, 200, 200, 403, 404, 401 },
        { "POST assignments", 200, 403, 403, 403, 404, 401 },
        { "POST heartbeat", 409, 200, 409, 403, 404, 401 },
        { "POST release", 204, 204, 403, 403, 404, 401 },
        { "PUT result", 200, 200, 403, 403, 404, 401 },
        { "GET run", 200, 200, 200, 200, 404, 401 },
        { "POST reopen", 200, 200, 403, 403, 404, 401 },
        { "POST results file", 200, 200, 422, 403, 404, 401 },
        { "GET export", 200, 200, 200, 200, 404, 401 },
        { "GET activity", 200, 200, 200, 200, 404, 401 },
        { "GET members", 200, 200, 200, 200, 404, 401 },
        { "PUT member", 200, 403, 403, 403, 404, 401 },
        { "DELETE member", 204, 403, 403, 403, 404, 401 },
        { "POST invitation", 201, 403, 403, 403, 404, 401 },
        { "GET invitations", 200, 403, 403, 403, 404, 401 },
        { "DELETE invitation", 204, 403, 403, 403, 404, 401 },
    };

    private static readonly string[] Who = ["lena", "ana", "ben", "vik", "olga", "anonymous"];

    [Theory]
    [MemberData(nameof(Matrix))]
    public async Task Every_endpoint_checks_the_role(string endpoint, int lead, int analyst, int otherAnalyst, int viewer, int outsider, int anonymous)
    {
        int[] expected = [lead, analyst, otherAnalyst, viewer, outsider, anonymous];
        var failures = new List<string>();
        for (var i = 0; i < Who.Length; i++)
        {
            using var request = await RequestAsync(endpoint);
            using var client = fixture.App.ClientWithToken(fixture.Tokens[Who[i]]);
            var response = await client.SendAsync(request);
            if ((int)response.StatusCode != expected[i])
                failures.Add($"{Who[i]}: expected {expected[i]}, got {(int)response.StatusCode} {await response.Content.ReadAsStringAsync()}");
            else if (expected[i] >= 400)
                Assert.Equal("application/problem+json", response.Content.Headers.ContentType?.MediaType);
        }
        Assert.True(failures.Count == 0, $"{endpoint}:\n" + string.Join("\n", failures));
    }

    /// <summary>Creating studies and accounts, and listing accounts, belong to the admin: a study's lead is refused
    /// like everyone else, an anonymous caller is asked to sign in, and nothing is stored.</summary>
    [Fact]
    public async Task Only_the_admin_creates_studies_and_accounts()
    {
        var failures = new List<string>();
        var requests = new (string What, Func<HttpRequestMessage> Make, int Admin)[]
        {
            ("POST study", () => Json(HttpMethod.Post, "/api/studies", JsonSerializer.Serialize(TestTeam.HeatSinkStudy("Not allowed"), RunfoldJson.Options)), 201),
            ("POST user", () => Json(HttpMethod.Post, "/api/users", $$"""{"userName":"{{"u" + Guid.NewGuid().ToString("N")[..12]}}","password":"{{TestTeam.Password}}"}"""), 201),
            ("GET users", () => new(HttpMethod.Get, "/api/users"), 200),
        };
        await using var db = fixture.App.Db();
        var studiesBefore = db.Studies.Count();
        var usersBefore = db.Users.Count();
        foreach (var (what, make, _) in requests)
        {
            foreach (var who in Who)
            {
                using var client = fixture.App.ClientWithToken(fixture.Tokens[who]);
                var response = await client.SendAsync(make());
                var expected = who == "anonymous" ? 401 : 403;
                if ((int)response.StatusCode != expected) failures.Add($"{what} by {who}: expected {expected}, got {(int)response.StatusCode}");
                else Assert.Equal("application/problem+json", response.Content.Headers.ContentType?.MediaType);
            }
        }
        Assert.True(failures.Count == 0, string.Join("\n", failures));
        Assert.Equal((studiesBefore, usersBefore), (db.Studies.Count(), db.Users.Count()));
        using var admin = fixture.App.AdminClient();
        foreach (var (what, make, adminStatus) in requests)
            Assert.True((int)(await admin.SendAsync(make())).StatusCode == adminStatus, $"{what} by the admin");
    }

    /// <summary>The list of studies names only the caller's own: the outsider sees the study she leads elsewhere,
    /// never this one.</summary>
    [Fact]
    public async Task The_study_list_shows_each_person_only_their_studies()
    {
        async Task<List<string>> NamesAsync(string who)
        {
            using var client = fixture.App.ClientWithToken(fixture.Tokens[who]);
            return [.. (await (await client.GetAsync("/api/studies")).ReadAsync<List<StudySummary>>()).Select(s => s.Name)];
        }
        Assert.Contains("Roles", await NamesAsync("vik"));
        Assert.DoesNotContain("Elsewhere", await NamesAsync("vik"));
        Assert.Equal(["Elsewhere"], await NamesAsync("olga"));
        using var anonymous = fixture.App.ClientWithToken(null);
        Assert.Equal(HttpStatusCode.Unauthorized, (await anonymous.GetAsync("/api/studies")).StatusCode);
    }

    /// <summary>A fresh request; run-level requests get a fresh run claimed by ana (or failed by her, for reopen).</summary>
    private async Task<HttpRequestMessage> RequestAsync(string endpoint)
    {
        var study = $"/api/studies/{fixture.Study.Id}";
        switch (endpoint)
        {
            case "GET study": return new(HttpMethod.Get, study);
            case "PATCH study": return Json(HttpMethod.Patch, study, """{"leaseHours":12}""");
            case "GET runs": return new(HttpMethod.Get, study + "/runs");
            case "POST claims": return Json(HttpMethod.Post, study + "/claims", """{"count":1}""");
            case "POST assignments":
                var open = await OpenRunAsync();
                return Json(HttpMethod.Post, study + "/assignments", $$"""{"runs":[{{open.Number}}],"assignee":"ben"}""");
            case "POST heartbeat": return new(HttpMethod.Post, $"/api/runs/{(await AnaClaimsAsync()).Id}/heartbeat");
            case "POST release": return new(HttpMethod.Post, $"/api/runs/{(await AnaClaimsAsync()).Id}/release");
            case "PUT result": return Json(HttpMethod.Put, $"/api/runs/{(await AnaClaimsAsync()).Id}/result", Done);
            case "GET run": return new(HttpMethod.Get, $"/api/runs/{(await AnaClaimsAsync()).Id}");
            case "POST reopen":
                var failed = await AnaClaimsAsync();
                using (var ana = fixture.App.ClientWithToken(fixture.Tokens["ana"]))
                    Assert.True((await ana.SendAsync(Json(HttpMethod.Put, $"/api/runs/{failed.Id}/result", """{"state":"failed","note":"diverged"}"""))).IsSuccessStatusCode);
                return new(HttpMethod.Post, $"/api/runs/{failed.Id}/reopen");
            case "POST results file":
                var held = await AnaClaimsAsync();
                var form = new MultipartFormDataContent();
                var file = new ByteArrayContent(Encoding.UTF8.GetBytes($"run,thermal_resistance,pressure_drop,mass\n{held.Number},0.4,30,100\n"));
                file.Headers.ContentType = new MediaTypeHeaderValue("text/csv");
                form.Add(file, "file", "one.csv");
                return new(HttpMethod.Post, study + "/results") { Content = form };
            case "GET export": return new(HttpMethod.Get, study + "/export?format=csv");
            case "GET activity": return new(HttpMethod.Get, study + "/activity");
            case "GET members": return new(HttpMethod.Get, study + "/members");
            case "PUT member":
                await ResetOlgaAsync();
                return Json(HttpMethod.Put, study + "/members/olga", """{"role":"viewer"}""");
            case "DELETE member":
                await AddTemporaryMemberAsync();
                return new(HttpMethod.Delete, study + "/members/tmp");
            case "POST invitation": return Json(HttpMethod.Post, study + "/invitations", """{"role":"analyst","note":"new hire"}""");
            case "GET invitations": return new(HttpMethod.Get, study + "/invitations");
            case "DELETE invitation":
                using (var admin = fixture.App.AdminClient())
                {
                    var created = await (await admin.PostJsonAsync(study + "/invitations", new InvitationRequest(StudyRole.Viewer))).ReadAsync<InvitationCreated>();
                    return new(HttpMethod.Delete, study + $"/invitations/{created.Id}");
                }
            default: throw new ArgumentOutOfRangeException(nameof(endpoint), endpoint, null);
        }
    }

    private async Task<RunDto> AnaClaimsAsync()
    {
        using var ana = fixture.App.ClientWithToken(fixture.Tokens["ana"]);
        return Assert.Single(await (await ana.PostJsonAsync($"/api/studies/{fixture.Study.Id}/claims", new ClaimRequest(1))).ReadAsync<List<RunDto>>());
    }

    private async Task<RunDto> OpenRunAsync()
    {
        using var admin = fixture.App.AdminClient();
        return (await (await admin.GetAsync($"/api/studies/{fixture.Study.Id}/runs?state=open")).ReadAsync<List<RunDto>>())[^1];
    }

    /// <summary>Keeps olga an outsider: the lead's PUT makes her a viewer, which the next role would see.</summary>
    private async Task ResetOlgaAsync()
    {
        using var admin = fixture.App.AdminClient();
        await admin.DeleteAsync($"/api/studies/{fixture.Study.Id}/members/olga");
    }

    private async Task AddTemporaryMemberAsync()
    {
        using var admin = fixture.App.AdminClient();
        if ((await admin.PostJsonAsync("/api/users", new CreateUserRequest("tmp", Password: TestTeam.Password))).StatusCode is not (HttpStatusCode.Created or HttpStatusCode.BadRequest))
            throw new InvalidOperationException("The temporary account could not be created.");
        await TestTeam.JoinAsync(fixture.App, fixture.Study.Id, "tmp", StudyRole.Viewer);
    }

    private static HttpRequestMessage Json(HttpMethod method, string url, string body) =>
        new(method, url) { Content = new StringContent(body, Encoding.UTF8, "application/json") };
}
