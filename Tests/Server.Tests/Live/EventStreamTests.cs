using System.Net;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.DependencyInjection.Extensions;
using Runfold.Server.Live;
using Runfold.Server.Tests.Analysis;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Live;

/// <summary>GET /api/studies/{id}/events: server-sent events with ids, resumed with Last-Event-ID, heartbeat
/// comments, and the study's role check.</summary>
public sealed class EventStreamTests : IAsyncLifetime
{
    private RunfoldApp _app = null!;
    private StudyDetail _study = null!;
    private HttpClient _lead = null!;
    private HttpClient _viewer = null!;

    public async Task InitializeAsync()
    {
        _app = await RunfoldApp.StartAsync(services: s => s.Replace(ServiceDescriptor.Singleton(new LiveOptions { Heartbeat = TimeSpan.FromMilliseconds(300) })));
        _study = await TestTeam.CreateStudyAsync(_app, AnalysisKit.Study("Events"));
        _lead = _app.AdminClient();
        _viewer = _app.ClientWithToken(await TestTeam.PersonAsync(_app, "vik"));
        await TestTeam.JoinAsync(_app, _study.Id, "vik", StudyRole.Viewer);
    }

    public async Task DisposeAsync()
    {
        _lead.Dispose();
        _viewer.Dispose();
        await _app.DisposeAsync();
    }

    [Fact]
    public async Task A_stream_tells_changes_and_snapshots_and_resumes_where_the_client_left_off()
    {
        string last;
        await using (var stream = await EventStream.OpenAsync(_viewer, _study.Id))
        {
            Assert.Equal("2000", (await stream.NextAsync(b => b.Retry is not null, what: "retry field")).Retry);
            Assert.Equal("0-0", (await stream.NextAsync(b => b.Id is not null, what: "opening id")).Id);

            await AnalysisKit.PostAsync(_lead, _study.Runs![0]);
            var changed = await stream.NextAsync(b => b.Name == "changed", what: "changed event");
            Assert.Equal((StudyLiveEventKind.Changed, 1L), (changed.Event!.Kind, changed.Event.ResultSetVersion));
            Assert.Equal("1-0", changed.Id);
            var snapshot = await stream.NextAsync(b => b.Name == "snapshot", what: "snapshot event");
            Assert.Equal((1L, 1), (snapshot.Event!.ResultSetVersion, snapshot.Event.SnapshotVersion));
            Assert.Equal("1-1", snapshot.Id);

            await AnalysisKit.PostAsync(_lead, _study.Runs[1]);
            last = (await stream.NextAsync(b => b.Name == "snapshot", what: "second snapshot")).Id!;
            Assert.Equal("2-2", last);
        }

        // Disconnected while three more results arrive, each analysed.
        foreach (var run in _study.Runs.Skip(2).Take(3))
        {
            await AnalysisKit.PostAsync(_lead, run);
            var version = await AnalysisKit.ResultSetVersionAsync(_app, _study.Id);
            await AnalysisKit.WaitForAsync(_lead, _study.Id, s => s.ResultSetVersion == version, $"of result-set version {version}");
        }
        List<int> stored;
        await using (var db = _app.Db())
            stored = await db.AnalysisSnapshots.Where(s => s.StudyId == _study.Id && s.Version > 2).OrderBy(s => s.Version).Select(s => s.Version).ToListAsync();

        await using var resumed = await EventStream.OpenAsync(_viewer, _study.Id, last);
        var first = await resumed.NextAsync(b => b.Name is not null, what: "first event after resuming");
        Assert.Equal("changed", first.Name); // claims carry no version: a resumed client re-reads the runs
        Assert.Equal(5, first.Event!.ResultSetVersion);
        var missed = new List<int>();
        foreach (var _ in stored)
            missed.Add((await resumed.NextAsync(b => b.Name == "snapshot", what: "missed snapshot")).Event!.SnapshotVersion!.Value);
        Assert.Equal(stored, missed);
        Assert.Equal($"5-{stored[^1]}", (await resumed.NextAsync(b => b.Id is not null && b.Name is null, what: "position after resuming")).Id);
    }

    [Fact]
    public async Task An_idle_stream_carries_heartbeat_comments()
    {
        await using var stream = await EventStream.OpenAsync(_viewer, _study.Id);
        Assert.Equal("keep-alive", (await stream.NextAsync(b => b.Comment is not null, TimeSpan.FromSeconds(10), "heartbeat")).Comment);
        Assert.Equal("keep-alive", (await stream.NextAsync(b => b.Comment is not null, TimeSpan.FromSeconds(10), "second heartbeat")).Comment);
    }

    [Fact]
    public async Task Only_members_of_the_study_follow_it()
    {
        using var outsider = _app.ClientWithToken(await TestTeam.PersonAsync(_app, "olga"));
        var hidden = await outsider.GetAsync($"/api/studies/{_study.Id}/events");
        Assert.Equal(HttpStatusCode.NotFound, hidden.StatusCode);
        Assert.Equal("application/problem+json", hidden.Content.Headers.ContentType?.MediaType);
        using var anonymous = _app.ClientWithToken(null);
        Assert.Equal(HttpStatusCode.Unauthorized, (await anonymous.GetAsync($"/api/studies/{_study.Id}/events")).StatusCode);
    }
}
