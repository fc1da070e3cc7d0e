using System.Net;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Time.Testing;
using Runfold.Server.Runs;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Runs;

/// <summary>Leases on a fake clock: heartbeats extend, the sweep returns lapsed runs to open and records it.
/// The background sweep is left out so each test calls the sweep itself, without sleeping.</summary>
public sealed class LeaseTests : IAsyncLifetime
{
    private readonly FakeTimeProvider _clock = new(new DateTimeOffset(2026, 11, 30, 8, 0, 0, TimeSpan.Zero));
    private RunfoldApp _app = null!;
    private string _ana = null!;
    private string _ben = null!;
    private StudyDetail _study = null!;

    public async Task InitializeAsync()
    {
        _app = await RunfoldApp.StartAsync(services: FakeClock.Install(_clock));
        _study = await TestTeam.CreateStudyAsync(_app, TestTeam.HeatSinkStudy("Leases"));
        _ana = await TestTeam.PersonAsync(_app, "ana");
        _ben = await TestTeam.PersonAsync(_app, "ben");
        await TestTeam.JoinAsync(_app, _study.Id, "ana", StudyRole.Analyst);
        await TestTeam.JoinAsync(_app, _study.Id, "ben", StudyRole.Analyst);
    }

    public async Task DisposeAsync() => await _app.DisposeAsync();

    private Task<int> SweepAsync() => _app.Services.GetRequiredService<LeaseSweeper>().SweepAsync(CancellationToken.None);

    [Fact]
    public async Task A_claim_lasts_the_study_lease_and_a_lapsed_lease_returns_the_run_to_open_with_an_audit_event()
    {
        using var ana = _app.ClientWithToken(_ana);
        var claimed = await (await ana.PostJsonAsync($"/api/studies/{_study.Id}/claims", new ClaimRequest(2))).ReadAsync<List<RunDto>>();
        Assert.Equal([1, 2], claimed.Select(r => r.Number));
        Assert.All(claimed, r => Assert.Equal(_clock.GetUtcNow().AddHours(24), r.LeaseExpiresAt));
        Assert.All(claimed, r => Assert.Equal("ana", r.Assignee));

        _clock.Advance(TimeSpan.FromHours(23.9));
        Assert.Equal(0, await SweepAsync());

        _clock.Advance(TimeSpan.FromHours(0.2));
        Assert.Equal(2, await SweepAsync());
        Assert.Equal(0, await SweepAsync());

        var runs = await (await ana.GetAsync($"/api/studies/{_study.Id}/runs")).ReadAsync<List<RunDto>>();
        Assert.All(runs.Take(2), r => Assert.Equal((RunState.Open, (string?)null, (DateTimeOffset?)null), (r.State, r.Assignee, r.LeaseExpiresAt)));
        var lapsed = await TestTeam.EventsAsync(_app, _study.Id, "lease.lapsed");
        Assert.Equal(2, lapsed.Count);
        Assert.All(lapsed, e => Assert.Equal(("system", (Guid?)null), (e.Source, e.ActorId)));
        Assert.Contains("ana", lapsed[0].Detail, StringComparison.Ordinal);

        // The lapsed holder's heartbeat is refused; the runs are claimable again, lowest number first.
        var heartbeat = await ana.PostAsync($"/api/runs/{claimed[0].Id}/heartbeat", null);
        Assert.Equal(HttpStatusCode.Conflict, heartbeat.StatusCode);
        using var ben = _app.ClientWithToken(_ben);
        var again = await (await ben.PostJsonAsync($"/api/studies/{_study.Id}/claims", new ClaimRequest(1))).ReadAsync<List<RunDto>>();
        Assert.Equal(1, Assert.Single(again).Number);
    }

    [Fact]
    public async Task A_heartbeat_extends_the_lease_by_its_length_from_now()
    {
        using var ana = _app.ClientWithToken(_ana);
        var run = Assert.Single(await (await ana.PostJsonAsync($"/api/studies/{_study.Id}/claims", new ClaimRequest(1, LeaseHours: 2))).ReadAsync<List<RunDto>>());
        Assert.Equal(_clock.GetUtcNow().AddHours(2), run.LeaseExpiresAt);

        _clock.Advance(TimeSpan.FromHours(1.5));
        var beat = await ana.PostAsync($"/api/runs/{run.Id}/heartbeat", null);
        Assert.Equal(HttpStatusCode.OK, beat.StatusCode);
        Assert.Equal(_clock.GetUtcNow().AddHours(2), (await beat.ReadAsync<HeartbeatAnswer>()).LeaseExpiresAt);

        _clock.Advance(TimeSpan.FromHours(1.5)); // 3 h after the claim, 1.5 h after the heartbeat
        Assert.Equal(0, await SweepAsync());
        _clock.Advance(TimeSpan.FromHours(0.6));
        Assert.Equal(1, await SweepAsync());
    }

    [Fact]
    public async Task Only_the_holder_heartbeats_and_the_lead_sets_the_lease_length()
    {
        using var ana = _app.ClientWithToken(_ana);
        using var ben = _app.ClientWithToken(_ben);
        var run = Assert.Single(await (await ana.PostJsonAsync($"/api/studies/{_study.Id}/claims", new ClaimRequest(1))).ReadAsync<List<RunDto>>());
        var foreign = await ben.PostAsync($"/api/runs/{run.Id}/heartbeat", null);
        Assert.Equal(HttpStatusCode.Conflict, foreign.StatusCode);
        Assert.Contains("claimed by ana", await foreign.Content.ReadAsStringAsync(), StringComparison.Ordinal);

        using var admin = _app.AdminClient();
        var edited = await admin.PatchAsync($"/api/studies/{_study.Id}", Json(new StudyEdit(LeaseHours: 6)));
        Assert.Equal(HttpStatusCode.OK, edited.StatusCode);
        Assert.Equal(6, (await edited.ReadAsync<StudyDetail>()).LeaseHours);
        var next = Assert.Single(await (await ben.PostJsonAsync($"/api/studies/{_study.Id}/claims", new ClaimRequest(1))).ReadAsync<List<RunDto>>());
        Assert.Equal(_clock.GetUtcNow().AddHours(6), next.LeaseExpiresAt);

        var tooLong = await ben.PostJsonAsync($"/api/studies/{_study.Id}/claims", new ClaimRequest(1, LeaseHours: 1000));
        Assert.Equal(HttpStatusCode.BadRequest, tooLong.StatusCode);
        Assert.Contains("leaseHours", await tooLong.Content.ReadAsStringAsync(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task Release_returns_the_run_and_the_lead_may_release_and_assign_others_runs()
    {
        using var ana = _app.ClientWithToken(_ana);
        using var ben = _app.ClientWithToken(_ben);
        var run = Assert.Single(await (await ana.PostJsonAsync($"/api/studies/{_study.Id}/claims", new ClaimRequest(1))).ReadAsync<List<RunDto>>());
        Assert.Equal(HttpStatusCode.Forbidden, (await ben.PostAsync($"/api/runs/{run.Id}/release", null)).StatusCode);
        Assert.Equal(HttpStatusCode.NoContent, (await ana.PostAsync($"/api/runs/{run.Id}/release", null)).StatusCode);
        Assert.Equal(HttpStatusCode.Conflict, (await ana.PostAsync($"/api/runs/{run.Id}/release", null)).StatusCode);

        using var admin = _app.AdminClient();
        var assigned = await admin.PostJsonAsync($"/api/studies/{_study.Id}/assignments", new AssignRequest([1, 2], "ben"));
        Assert.Equal(HttpStatusCode.OK, assigned.StatusCode);
        Assert.All(await assigned.ReadAsync<List<RunDto>>(), r => Assert.Equal((RunState.Claimed, "ben"), (r.State, r.Assignee)));
        var twice = await admin.PostJsonAsync($"/api/studies/{_study.Id}/assignments", new AssignRequest([2, 3], "ana"));
        Assert.Equal(HttpStatusCode.Conflict, twice.StatusCode);
        Assert.Contains("Run 2 is not open", await twice.Content.ReadAsStringAsync(), StringComparison.Ordinal);
        await using (var db = _app.Db())
            Assert.Equal(RunState.Open, (await db.Runs.SingleAsync(r => r.StudyId == _study.Id && r.Number == 3)).State); // all or nothing

        Assert.Equal(HttpStatusCode.NoContent, (await admin.PostAsync($"/api/runs/{run.Id}/release", null)).StatusCode);
        var released = await TestTeam.EventsAsync(_app, _study.Id, "run.released");
        Assert.Contains(released, e => e.Detail.Contains("claimed by ben", StringComparison.Ordinal));
    }

    private static StringContent Json<T>(T value) =>
        new(System.Text.Json.JsonSerializer.Serialize(value, RunfoldJson.Options), System.Text.Encoding.UTF8, "application/json");
}
