using System.Net.Http.Json;
using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Time.Testing;
using Runfold.Server.Auth;
using Runfold.Server.Data.Entities;
using Runfold.Server.Runs;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Studies;

/// <summary>What the studies list and the run board read beyond the runs themselves, on PostgreSQL: the newest
/// activity and the best candidate of the newest snapshot per study, and the run progress (per person, burndown,
/// expected finish) on a fake clock.</summary>
public sealed class StudyBoardTests : IAsyncLifetime
{
    private static readonly DateTimeOffset T0 = new(2026, 11, 30, 8, 0, 0, TimeSpan.Zero);
    private readonly FakeTimeProvider _clock = new(T0);
    private RunfoldApp _app = null!;

    public async Task InitializeAsync() => _app = await RunfoldApp.StartAsync(services: FakeClock.Install(_clock));

    public async Task DisposeAsync() => await _app.DisposeAsync();

    private static AnalysisSnapshotDto Snapshot(int version, double desirability) => new(
        version, version, 20, 24, 0, T0.AddHours(version), [new ResponseAnalysisDto("thermal_resistance", "K/W", null, null, [], []), new ResponseAnalysisDto("mass", "g", null, null, [], [])],
        [
            new CandidateDto(2, new Dictionary<string, FactorValue>(), new Dictionary<string, PredictedValueDto> { ["mass"] = new(140, null) }, desirability - 0.1, 1, false, 0.3),
            new CandidateDto(1, new Dictionary<string, FactorValue> { ["fin_height"] = FactorValue.Of(41) },
                new Dictionary<string, PredictedValueDto> { ["mass"] = new(118.4, 2.5), ["thermal_resistance"] = new(0.412, 0.018) }, desirability, 1, true, 0.3),
        ]);

    [Fact]
    public async Task The_studies_list_carries_the_newest_activity_and_the_best_candidate_of_the_newest_snapshot()
    {
        var ana = await TestTeam.PersonAsync(_app, "ana");
        var first = await TestTeam.CreateStudyAsync(_app, TestTeam.HeatSinkStudy("With analysis"));
        var second = await TestTeam.CreateStudyAsync(_app, TestTeam.HeatSinkStudy("Without analysis"));
        await TestTeam.JoinAsync(_app, first.Id, "ana", StudyRole.Analyst);
        _clock.Advance(TimeSpan.FromMinutes(30));
        using var analyst = _app.ClientWithToken(ana);
        Assert.True((await analyst.PostJsonAsync($"/api/studies/{first.Id}/claims", new ClaimRequest(1))).IsSuccessStatusCode);
        await using (var db = _app.Db())
        {
            foreach (var (version, desirability) in new[] { (1, 0.5), (2, 0.81) })
                db.AnalysisSnapshots.Add(new AnalysisSnapshot
                {
                    StudyId = first.Id, Version = version, ResultSetVersion = version, BasedOnRuns = 20, ComputedAt = T0.AddHours(version),
                    PayloadJson = JsonSerializer.Serialize(Snapshot(version, desirability), RunfoldJson.Options),
                });
            await db.SaveChangesAsync();
        }

        using var admin = _app.AdminClient();
        var listed = (await admin.GetFromJsonAsync<List<StudySummary>>("/api/studies", RunfoldJson.Options))!;
        var withAnalysis = listed.Single(s => s.Id == first.Id);
        Assert.Equal(T0.AddMinutes(30), withAnalysis.LastActivityAt);
        Assert.Equal("ana claimed run 1 (lease 24 h)", withAnalysis.LastActivity);
        var best = withAnalysis.BestCandidate!;
        Assert.Equal((2, 20, 0.81, true, false), (best.SnapshotVersion, best.BasedOnRuns, best.Desirability, best.Extrapolating, best.Verified));
        // In the snapshot's response order, each with its unit.
        Assert.Equal([("thermal_resistance", "K/W", 0.412, 0.018), ("mass", "g", 118.4, 2.5)],
            best.Predicted.Select(p => (p.Response, p.Unit, p.Mean, p.Sd!.Value)));

        var without = listed.Single(s => s.Id == second.Id);
        Assert.Null(without.BestCandidate);
        Assert.StartsWith("admin created the study with 6 runs", without.LastActivity, StringComparison.Ordinal);
    }

    [Fact]
    public async Task Progress_counts_runs_per_person_draws_the_burndown_and_estimates_the_finish_from_the_median_run()
    {
        var ana = await TestTeam.PersonAsync(_app, "ana");
        var ben = await TestTeam.PersonAsync(_app, "ben");
        var study = await TestTeam.CreateStudyAsync(_app, TestTeam.HeatSinkStudy("Progress", 3, 2)); // 6 runs
        await TestTeam.JoinAsync(_app, study.Id, "ana", StudyRole.Analyst);
        await TestTeam.JoinAsync(_app, study.Id, "ben", StudyRole.Analyst);
        using var anaClient = _app.ClientWithToken(ana);
        using var benClient = _app.ClientWithToken(ben);
        var anaRuns = await (await anaClient.PostJsonAsync($"/api/studies/{study.Id}/claims", new ClaimRequest(2))).ReadAsync<List<RunDto>>();
        var benRuns = await (await benClient.PostJsonAsync($"/api/studies/{study.Id}/claims", new ClaimRequest(2))).ReadAsync<List<RunDto>>();

        _clock.Advance(TimeSpan.FromHours(2));
        await PostAsync(anaClient, anaRuns[0].Id, """{"state":"done","values":{"thermal_resistance":0.4,"pressure_drop":30,"mass":120}}""");
        _clock.Advance(TimeSpan.FromHours(2));
        await PostAsync(anaClient, anaRuns[1].Id, """{"state":"failed","note":"mesh did not converge"}""");
        _clock.Advance(TimeSpan.FromHours(2));
        await PostAsync(benClient, benRuns[0].Id, """{"state":"done","values":{"thermal_resistance":0.5,"pressure_drop":20,"mass":100}}""");

        var progress = await ProgressAsync(study.Id);
        // Most done first, then most claimed.
        Assert.Equal([("ben", 1, 1, 0), ("ana", 1, 0, 1)], progress.Analysts.Select(a => (a.UserName, a.Done, a.Claimed, a.Failed)));
        Assert.Equal([(0.0, 6, 6), (2, 5, 6), (4, 4, 6), (6, 3, 6)], progress.Burndown.Select(p => ((p.At - T0).TotalHours, p.Remaining, p.Total)));
        // Claim to result: 2 h, 4 h, 6 h → median 4 h; 3 runs left, 2 people holding claims or with recent results:
        // 2 rounds → 8 h from now.
        var finish = progress.Finish;
        Assert.Equal((3, 2, 4.0, 3), (finish.Remaining, finish.People, finish.MedianRunHours!.Value, finish.RunsTimed));
        Assert.Equal(T0.AddHours(6 + 8), finish.ExpectedFinish);

        Guid outsider;
        await using (var db = _app.Db()) outsider = await db.Users.Where(u => u.UserName == "ana").Select(u => u.Id).SingleAsync();
        var other = await TestTeam.CreateStudyAsync(_app, TestTeam.HeatSinkStudy("Not ana's"));
        await using var scope = _app.Services.CreateAsyncScope();
        var refused = await scope.ServiceProvider.GetRequiredService<RunProgressQueries>().GetAsync(new Caller(outsider, "ana", false, null), other.Id, CancellationToken.None);
        Assert.Equal(OutcomeKind.NotFound, refused.Kind);
    }

    private static async Task PostAsync(HttpClient client, int runId, string body)
    {
        using var content = new StringContent(body, System.Text.Encoding.UTF8, "application/json");
        var response = await client.PutAsync($"/api/runs/{runId}/result", content);
        Assert.True(response.IsSuccessStatusCode, await response.Content.ReadAsStringAsync());
    }

    private async Task<RunProgressDto> ProgressAsync(int studyId)
    {
        await using var db = _app.Db();
        var admin = await db.Users.Where(u => u.UserName == "admin").Select(u => u.Id).SingleAsync();
        await using var scope = _app.Services.CreateAsyncScope();
        var answer = await scope.ServiceProvider.GetRequiredService<RunProgressQueries>().GetAsync(new Caller(admin, "admin", true, null), studyId, CancellationToken.None);
        Assert.True(answer.IsOk, answer.Message);
        return answer.Value!;
    }
}
