using System.Net;
using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.Time.Testing;
using Runfold.Server.Data.Entities;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;
using Runfold.Tests.Samples;

namespace Runfold.Server.Tests.Sharing;

/// <summary>Share links on PostgreSQL through the real host: created, listed and revoked by the lead (audited),
/// opened without an account, refused once expired (on a fake clock) or revoked, and the role of every caller.</summary>
public sealed class ShareLinkTests : IAsyncLifetime
{
    private readonly FakeTimeProvider _clock = new(new DateTimeOffset(2026, 11, 30, 8, 0, 0, TimeSpan.Zero));
    private RunfoldApp _app = null!;
    private StudyDetail _study = null!;
    private readonly Dictionary<string, string?> _tokens = [];

    public async Task InitializeAsync()
    {
        _app = await RunfoldApp.StartAsync(services: FakeClock.Install(_clock));
        _study = await TestTeam.CreateStudyAsync(_app, TestTeam.HeatSinkStudy("Shared <fin> study"));
        foreach (var (name, role) in new (string, StudyRole?)[] { ("lena", StudyRole.Lead), ("ana", StudyRole.Analyst), ("vik", StudyRole.Viewer), ("olga", null) })
        {
            _tokens[name] = await TestTeam.PersonAsync(_app, name);
            if (role is { } r) await TestTeam.JoinAsync(_app, _study.Id, name, r);
        }
        _tokens["anonymous"] = null;
    }

    public async Task DisposeAsync() => await _app.DisposeAsync();

    private string Links => $"/api/studies/{_study.Id}/share-links";

    private async Task<ShareLinkDto> CreateAsync(ShareLinkRequest request, string who = "lena")
    {
        using var lead = _app.ClientWithToken(_tokens[who]);
        var response = await lead.PostJsonAsync(Links, request);
        Assert.True(response.StatusCode == HttpStatusCode.Created, await response.Content.ReadAsStringAsync());
        return await response.ReadAsync<ShareLinkDto>();
    }

    private async Task<string> OpenPageAsync(string path)
    {
        using var anonymous = _app.ClientWithToken(null);
        var response = await anonymous.GetAsync(path);
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        Assert.True(response.Headers.CacheControl?.NoStore, "A share link's page must not be cached: a revoked link would come back from the cache.");
        return await response.Content.ReadAsStringAsync();
    }

    private static string Token(ShareLinkDto link) => link.Path!["/shared/".Length..];

    [Fact]
    public async Task The_lead_creates_a_link_that_opens_the_summary_without_an_account_and_lists_it_to_copy_again()
    {
        var link = await CreateAsync(new ShareLinkRequest(Note: "design review"));
        Assert.StartsWith("/shared/", link.Path, StringComparison.Ordinal);
        Assert.Equal(_clock.GetUtcNow().AddDays(14), link.ExpiresAt);
        Assert.Equal(("design review", "lena"), (link.Note, link.CreatedBy));

        var page = await OpenPageAsync(link.Path!);
        Assert.Contains("Shared &lt;fin&gt; study", page, StringComparison.Ordinal);
        Assert.Contains("A read-only summary shared by the study&#x27;s lead", page, StringComparison.Ordinal);
        Assert.Contains($"api/studies/{_study.Id}/report?link=", page, StringComparison.Ordinal);
        Assert.DoesNotContain(">lena", page, StringComparison.Ordinal); // nothing of the team
        Assert.DoesNotContain("study-nav", page, StringComparison.Ordinal);

        using var lead = _app.ClientWithToken(_tokens["lena"]);
        var listed = Assert.Single(await (await lead.GetAsync(Links)).ReadAsync<List<ShareLinkDto>>());
        Assert.Equal(link.Id, listed.Id);
        Assert.NotNull(listed.Path); // a working link can be copied again; its token opens the same page
        Assert.Contains("Shared &lt;fin&gt; study", await OpenPageAsync(listed.Path!), StringComparison.Ordinal);

        var created = Assert.Single(await TestTeam.EventsAsync(_app, _study.Id, "share.created"));
        Assert.Equal("lena created a share link for design review, working until 2026-12-14 08:00 UTC", created.Detail);
    }

    [Fact]
    public async Task A_link_stops_working_when_it_expires()
    {
        var link = await CreateAsync(new ShareLinkRequest(LifetimeDays: 1));
        _clock.Advance(TimeSpan.FromHours(23));
        Assert.Contains("A read-only summary", await OpenPageAsync(link.Path!), StringComparison.Ordinal);

        _clock.Advance(TimeSpan.FromHours(1));
        var page = await OpenPageAsync(link.Path!);
        Assert.Contains("This link does not open", page, StringComparison.Ordinal);
        Assert.Contains("This share link expired on 2026-12-01 08:00 UTC. Ask the study&#x27;s lead for a new one.", page, StringComparison.Ordinal);
        Assert.DoesNotContain("Top candidates", page, StringComparison.Ordinal);

        using var anonymous = _app.ClientWithToken(null);
        var report = await anonymous.GetAsync($"/api/studies/{_study.Id}/report?link={Token(link)}");
        Assert.Equal(HttpStatusCode.Forbidden, report.StatusCode);
        Assert.Contains("expired", (await report.ReadAsync<JsonElement>()).GetProperty("detail").GetString(), StringComparison.Ordinal);

        using var lead = _app.ClientWithToken(_tokens["lena"]);
        Assert.Null(Assert.Single(await (await lead.GetAsync(Links)).ReadAsync<List<ShareLinkDto>>()).Path);
    }

    [Fact]
    public async Task A_revoked_link_is_refused_at_once_and_the_revocation_is_audited()
    {
        var link = await CreateAsync(new ShareLinkRequest(Note: "supplier"));
        using var anonymous = _app.ClientWithToken(null);
        Assert.Equal(HttpStatusCode.OK, (await anonymous.GetAsync($"/api/studies/{_study.Id}/report?link={Token(link)}")).StatusCode);

        using var lead = _app.ClientWithToken(_tokens["lena"]);
        Assert.Equal(HttpStatusCode.NoContent, (await lead.DeleteAsync($"{Links}/{link.Id}")).StatusCode);
        Assert.Contains("This share link was revoked on 2026-11-30 08:00 UTC.", await OpenPageAsync(link.Path!), StringComparison.Ordinal);
        var report = await anonymous.GetAsync($"/api/studies/{_study.Id}/report?link={Token(link)}");
        Assert.Equal(HttpStatusCode.Forbidden, report.StatusCode);
        Assert.Equal("application/problem+json", report.Content.Headers.ContentType?.MediaType);

        var again = await lead.DeleteAsync($"{Links}/{link.Id}");
        Assert.Equal(HttpStatusCode.NotFound, again.StatusCode);
        Assert.Contains("revoked", (await again.ReadAsync<JsonElement>()).GetProperty("detail").GetString(), StringComparison.Ordinal);

        var revoked = Assert.Single(await TestTeam.EventsAsync(_app, _study.Id, "share.revoked"));
        Assert.StartsWith("lena revoked a share link for supplier", revoked.Detail, StringComparison.Ordinal);
        await using var db = _app.Db();
        var row = await db.ShareLinks.AsNoTracking().SingleAsync(l => l.Id == link.Id);
        Assert.Equal(_clock.GetUtcNow(), row.RevokedAt);
    }

    [Fact]
    public async Task A_forged_or_altered_token_and_a_token_for_another_study_are_refused()
    {
        var link = await CreateAsync(new ShareLinkRequest());
        var token = Token(link);
        var altered = token[..^3] + (token[^3] == 'A' ? "B" : "A") + token[^2..];
        Assert.Contains("This share link is not valid", await OpenPageAsync("/shared/" + altered), StringComparison.Ordinal);
        Assert.Contains("This share link is not valid", await OpenPageAsync("/shared/not-a-token"), StringComparison.Ordinal);

        var other = await TestTeam.CreateStudyAsync(_app, TestTeam.HeatSinkStudy("Other study"));
        using var anonymous = _app.ClientWithToken(null);
        var report = await anonymous.GetAsync($"/api/studies/{other.Id}/report?link={token}");
        Assert.Equal(HttpStatusCode.NotFound, report.StatusCode);
        Assert.Equal(HttpStatusCode.Unauthorized, (await anonymous.GetAsync($"/api/studies/{_study.Id}/report")).StatusCode);
    }

    [Fact]
    public async Task A_lifetime_outside_an_hour_to_ninety_days_and_a_long_note_are_refused_with_the_field_named()
    {
        using var lead = _app.ClientWithToken(_tokens["lena"]);
        foreach (var days in new[] { 0.0, 0.01, 91 })
        {
            var response = await lead.PostJsonAsync(Links, new ShareLinkRequest(days));
            Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
            Assert.True((await response.ReadAsync<JsonElement>()).GetProperty("errors").TryGetProperty("lifetimeDays", out _));
        }
        var note = await lead.PostJsonAsync(Links, new ShareLinkRequest(Note: new string('n', 201)));
        Assert.Equal("The note is longer than 200 characters.", (await note.ReadAsync<JsonElement>()).GetProperty("errors").GetProperty("note")[0].GetString());
        Assert.Equal(HttpStatusCode.Created, (await lead.PostJsonAsync(Links, new ShareLinkRequest(90))).StatusCode);
        Assert.Equal(HttpStatusCode.Created, (await lead.PostJsonAsync(Links, new ShareLinkRequest(1.0 / 24))).StatusCode);
    }

    // Who: lead, analyst, viewer, outsider, anonymous.
    [Theory]
    [InlineData("POST", 201, 403, 403, 404, 401)]
    [InlineData("GET", 200, 403, 403, 404, 401)]
    [InlineData("DELETE", 204, 403, 403, 404, 401)]
    public async Task Only_the_lead_manages_share_links(string verb, int lead, int analyst, int viewer, int outsider, int anonymous)
    {
        string[] who = ["lena", "ana", "vik", "olga", "anonymous"];
        int[] expected = [lead, analyst, viewer, outsider, anonymous];
        var failures = new List<string>();
        for (var i = 0; i < who.Length; i++)
        {
            using var client = _app.ClientWithToken(_tokens[who[i]]);
            var response = verb switch
            {
                "POST" => await client.PostJsonAsync(Links, new ShareLinkRequest()),
                "GET" => await client.GetAsync(Links),
                _ => await client.DeleteAsync($"{Links}/{(await CreateAsync(new ShareLinkRequest())).Id}"),
            };
            if ((int)response.StatusCode != expected[i]) failures.Add($"{who[i]}: expected {expected[i]}, got {(int)response.StatusCode}");
            else if (expected[i] >= 400) Assert.Equal("application/problem+json", response.Content.Headers.ContentType?.MediaType);
        }
        Assert.True(failures.Count == 0, string.Join("\n", failures));
    }

    [Fact]
    public async Task A_link_made_on_one_server_instance_opens_on_another_sharing_the_database()
    {
        var link = await CreateAsync(new ShareLinkRequest());
        await using var second = await RunfoldApp.StartAsync(sharedPostgres: _app, services: FakeClock.Install(_clock));
        using var anonymous = second.ClientWithToken(null);
        var page = await (await anonymous.GetAsync(link.Path)).Content.ReadAsStringAsync();
        Assert.Contains("Shared &lt;fin&gt; study", page, StringComparison.Ordinal);
        Assert.Equal(HttpStatusCode.OK, (await anonymous.GetAsync($"/api/studies/{_study.Id}/report?link={Token(link)}")).StatusCode);
    }

    [Fact]
    public async Task The_shared_page_shows_the_latest_stored_snapshot()
    {
        var (_, runs) = SampleAnalysis.HeatSink();
        var snapshot = SampleAnalysis.Snapshot(_study, runs, version: 3);
        await using (var db = _app.Db())
        {
            db.AnalysisSnapshots.Add(new AnalysisSnapshot
            {
                StudyId = _study.Id, Version = 3, ResultSetVersion = 30, BasedOnRuns = snapshot.BasedOnRuns, ComputedAt = _clock.GetUtcNow(),
                PayloadJson = JsonSerializer.Serialize(snapshot, RunfoldJson.Options),
            });
            await db.SaveChangesAsync();
        }
        var page = await OpenPageAsync((await CreateAsync(new ShareLinkRequest())).Path!);
        Assert.Contains("Analysis 3", page, StringComparison.Ordinal);
        Assert.Contains("Top candidates", page, StringComparison.Ordinal);
        Assert.Contains("licensed engineering practice", page, StringComparison.Ordinal);
    }
}
