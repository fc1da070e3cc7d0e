using System.Diagnostics;
using System.Net;
using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Runfold.Server.Analysis;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Analysis;

public sealed class LiveAnalysisFixture : IAsyncLifetime
{
    public RunfoldApp App { get; private set; } = null!;

    public async Task InitializeAsync() => App = await RunfoldApp.StartAsync();

    public async Task DisposeAsync() => await App.DisposeAsync();
}

/// <summary>The live analysis on PostgreSQL through the HTTP API: a snapshot after every result (once the debounce
/// has passed), immutable and versioned, with failed runs left out and counted, a notice while runs are too few,
/// bursts coalesced, predictions from the latest snapshot's models.</summary>
public sealed class LiveAnalysisTests(LiveAnalysisFixture fixture) : IClassFixture<LiveAnalysisFixture>
{
    private RunfoldApp App => fixture.App;

    [Fact]
    public async Task Runs_posted_one_by_one_give_a_snapshot_based_on_every_done_run_each_time()
    {
        var study = await TestTeam.CreateStudyAsync(App, AnalysisKit.Study("One by one"));
        using var lead = App.AdminClient();
        var runs = study.Runs!;
        var needed = 4; // a linear model of two factors: intercept, two slopes, one run to spare
        for (var i = 0; i < runs.Count; i++)
        {
            await AnalysisKit.PostAsync(lead, runs[i]);
            var done = i + 1;
            var version = await AnalysisKit.ResultSetVersionAsync(App, study.Id);
            var snapshot = await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == version, $"of result-set version {version}");
            Assert.Equal(done, snapshot.BasedOnRuns);
            Assert.Equal(runs.Count, snapshot.TotalRuns);
            Assert.Equal(0, snapshot.FailedRuns);
            if (done < needed)
            {
                Assert.Equal(needed - done, snapshot.RunsStillNeeded);
                Assert.Contains($"{needed - done} more", snapshot.Notice, StringComparison.Ordinal);
                Assert.All(snapshot.Responses, r => Assert.Null(r.Model));
            }
            else
            {
                Assert.Null(snapshot.Notice);
                Assert.All(snapshot.Responses, r => Assert.Equal(done, r.FitCheck!.RunNumbers.Count));
            }
        }

        // Immutable history: versions 1, 2, 3 … of every result-set version in turn (a background comparison of every
        // model may add a snapshot of the same results), run counts growing with them.
        await using var db = App.Db();
        var stored = await db.AnalysisSnapshots.AsNoTracking().Where(s => s.StudyId == study.Id).OrderBy(s => s.Version).ToListAsync();
        Assert.Equal(Enumerable.Range(1, stored.Count), stored.Select(s => s.Version));
        Assert.Equal(Enumerable.Range(1, runs.Count).Select(v => (long)v), stored.Select(s => s.ResultSetVersion).Distinct());
        Assert.True(stored.Zip(stored.Skip(1)).All(p => p.First.ResultSetVersion <= p.Second.ResultSetVersion && p.First.BasedOnRuns <= p.Second.BasedOnRuns));
        var history = await (await lead.GetAsync($"/api/studies/{study.Id}/analysis/history")).ReadAsync<List<AnalysisHistoryPointDto>>();
        Assert.Equal(stored.Select(s => (s.Version, s.BasedOnRuns)), history.Select(h => (h.Version, h.BasedOnRuns)));
        Assert.Equal(["mass", "pressure_drop", "thermal_resistance"], history[^1].Nrmse.Keys.Order());
        Assert.Empty(history[0].Nrmse); // too few runs for any model
    }

    [Fact]
    public async Task Failed_runs_are_left_out_of_the_fit_and_counted()
    {
        var study = await TestTeam.CreateStudyAsync(App, AnalysisKit.Study("Failures"));
        using var lead = App.AdminClient();
        var runs = study.Runs!;
        for (var i = 0; i < 8; i++) await AnalysisKit.PostAsync(lead, runs[i], failed: i is 2 or 5);
        var version = await AnalysisKit.ResultSetVersionAsync(App, study.Id);
        var snapshot = await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == version, "of every result");

        Assert.Equal(6, snapshot.BasedOnRuns);
        Assert.Equal(2, snapshot.FailedRuns);
        Assert.All(snapshot.Responses, r =>
        {
            Assert.NotNull(r.Model);
            Assert.Equal(new[] { 1, 2, 4, 5, 7, 8 }, r.FitCheck!.RunNumbers);
        });
    }

    [Fact]
    public async Task Too_few_runs_say_how_many_more_are_needed_and_failed_runs_do_not_count()
    {
        var study = await TestTeam.CreateStudyAsync(App, AnalysisKit.Study("Too few"));
        using var lead = App.AdminClient();
        await AnalysisKit.PostAsync(lead, study.Runs![0]);
        await AnalysisKit.PostAsync(lead, study.Runs[1], failed: true);
        var version = await AnalysisKit.ResultSetVersionAsync(App, study.Id);
        var snapshot = await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == version, "of both results");

        Assert.Equal((1, 1, 3), (snapshot.BasedOnRuns, snapshot.FailedRuns, snapshot.RunsStillNeeded));
        Assert.Equal("A surrogate of 2 factors needs at least 4 done runs; 1 is done, so 3 more are needed. The failed run is not counted.", snapshot.Notice);
        Assert.All(snapshot.Responses, r => Assert.Null(r.Model));
        var predict = await lead.PostJsonAsync($"/api/studies/{study.Id}/predict", Point(40, 3));
        Assert.Equal(HttpStatusCode.UnprocessableEntity, predict.StatusCode);
        Assert.Contains("no surrogate of any response yet", await predict.Content.ReadAsStringAsync(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task A_burst_of_uploads_gives_one_or_two_refits_not_one_per_upload()
    {
        var study = await TestTeam.CreateStudyAsync(App, AnalysisKit.Study("Burst", 4, 4));
        using var lead = App.AdminClient();
        var statistics = App.Services.GetRequiredService<AnalysisCoordinator>().Statistics;
        var options = App.Services.GetRequiredService<AnalysisOptions>();
        var storedBefore = statistics.SnapshotsStored;

        var clock = Stopwatch.StartNew();
        foreach (var run in study.Runs!) await AnalysisKit.PostAsync(lead, run);
        var burst = clock.Elapsed;
        var version = await AnalysisKit.ResultSetVersionAsync(App, study.Id);
        await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == version && s.BasedOnRuns == 16, "of all 16 results");

        await using var db = App.Db();
        var snapshots = await db.AnalysisSnapshots.CountAsync(s => s.StudyId == study.Id);
        // Within the longest wait one refit covers the burst; a burst longer than that may take one more per wait.
        var allowed = 1 + (int)Math.Ceiling(burst / options.MaxWait);
        Assert.True(snapshots <= allowed, $"{snapshots} snapshots for 16 uploads in {burst.TotalSeconds:0.00} s (at most {allowed} expected).");
        Assert.True(statistics.SnapshotsStored - storedBefore >= snapshots);
    }

    [Fact]
    public async Task Predictions_come_from_the_latest_snapshot_in_natural_units()
    {
        var study = await TestTeam.CreateStudyAsync(App, AnalysisKit.Study("Predict", 4, 4));
        using var lead = App.AdminClient();
        foreach (var run in study.Runs!) await AnalysisKit.PostAsync(lead, run);
        var version = await AnalysisKit.ResultSetVersionAsync(App, study.Id);
        await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == version, "of all results");

        var response = await lead.PostJsonAsync($"/api/studies/{study.Id}/predict",
            new PredictRequest([Values(33, 2.2), Values(47.5, 4.9), Values(20, 6)]));
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        var predicted = await response.ReadAsync<List<Dictionary<string, PredictedValueDto>>>();
        Assert.Equal(3, predicted.Count);
        // Every response is a polynomial of degree ≤ 2 in the factors: the surrogates reproduce it between the runs.
        foreach (var (point, (h, v)) in predicted.Zip(new[] { (33.0, 2.2), (47.5, 4.9), (20.0, 6.0) }))
        {
            Assert.Equal(AnalysisKit.ThermalResistance(h, v), point["thermal_resistance"].Mean, 0.005);
            Assert.Equal(AnalysisKit.PressureDrop(h, v), point["pressure_drop"].Mean, 0.05);
            Assert.Equal(AnalysisKit.Mass(h), point["mass"].Mean, 0.5);
            Assert.All(point.Values, p => Assert.True(p.Sd is >= 0, "every model here gives a standard deviation"));
        }
    }

    [Fact]
    public async Task A_prediction_request_is_checked_field_by_field()
    {
        var study = await TestTeam.CreateStudyAsync(App, AnalysisKit.Study("Predict checks"));
        using var lead = App.AdminClient();
        var response = await lead.PostJsonAsync($"/api/studies/{study.Id}/predict", new PredictRequest(
        [
            new Dictionary<string, FactorValue> { ["fin_height"] = FactorValue.Of(80), ["air_velocity"] = FactorValue.Of(2) },
            new Dictionary<string, FactorValue> { ["fin_height"] = FactorValue.Of(30), ["fin_count"] = FactorValue.Of(12) },
        ]));
        Assert.Equal(HttpStatusCode.BadRequest, response.StatusCode);
        var problem = await response.ReadAsync<ValidationProblem>();
        Assert.Contains("outside the range of fin_height, 20 – 60 mm", problem.Errors["points[0].fin_height"][0], StringComparison.Ordinal);
        Assert.Contains("'fin_count' is not a factor of this study", problem.Errors["points[1].fin_count"][0], StringComparison.Ordinal);
        Assert.Contains("air_velocity is missing", problem.Errors["points[1].air_velocity"][0], StringComparison.Ordinal);

        var empty = await lead.PostJsonAsync($"/api/studies/{study.Id}/predict", new { });
        Assert.Equal(HttpStatusCode.BadRequest, empty.StatusCode);
        Assert.Contains("Send the points to predict", await empty.Content.ReadAsStringAsync(), StringComparison.Ordinal);
    }

    [Fact]
    public async Task An_augment_wave_adds_space_filling_runs_and_the_next_snapshot_counts_them()
    {
        var study = await TestTeam.CreateStudyAsync(App, AnalysisKit.Study("Waves"));
        using var lead = App.AdminClient();
        foreach (var run in study.Runs!.Take(6)) await AnalysisKit.PostAsync(lead, run);

        var response = await lead.PostJsonAsync($"/api/studies/{study.Id}/waves", new WaveRequest("augment", Count: 5));
        Assert.Equal(HttpStatusCode.Created, response.StatusCode);
        var added = await response.ReadAsync<List<RunDto>>();
        Assert.Equal(Enumerable.Range(13, 5), added.Select(r => r.Number));
        Assert.All(added, r => Assert.Equal((2, RunState.Open), (r.Wave, r.State)));
        // Inside the ranges, and apart from every run already there (greedy maximin never repeats a point).
        var existing = study.Runs!.Select(r => (r.Factors["fin_height"].Number, r.Factors["air_velocity"].Number)).ToList();
        foreach (var run in added)
        {
            var (h, v) = (run.Factors["fin_height"].Number, run.Factors["air_velocity"].Number);
            Assert.InRange(h, 20, 60);
            Assert.InRange(v, 1, 6);
            Assert.DoesNotContain((h, v), existing);
            existing.Add((h, v));
        }
        var wave = Assert.Single(await TestTeam.EventsAsync(App, study.Id, "wave.added"));
        Assert.Equal("admin added wave 2: 5 space-filling runs (maximin augmentation of the 12 runs so far), runs 13–17", wave.Detail);

        var version = await AnalysisKit.ResultSetVersionAsync(App, study.Id);
        var snapshot = await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == version, "after the wave");
        Assert.Equal((6, 17), (snapshot.BasedOnRuns, snapshot.TotalRuns));
    }

    [Fact]
    public async Task Infill_and_verify_waves_need_an_analysis_and_a_bad_request_is_named()
    {
        var study = await TestTeam.CreateStudyAsync(App, AnalysisKit.Study("Wave kinds"));
        using var lead = App.AdminClient();
        foreach (var (request, status, field, text) in new (object Request, HttpStatusCode Status, string Field, string Text)[]
                 {
                     (new { kind = "infill", criterion = "expectedImprovement" }, HttpStatusCode.UnprocessableEntity, "kind", "has no analysis yet"),
                     (new { kind = "verify", candidateRank = 1 }, HttpStatusCode.UnprocessableEntity, "candidateRank", "has no analysis yet"),
                     (new { kind = "more" }, HttpStatusCode.BadRequest, "kind", "'more' is not a kind of wave"),
                     (new { kind = "augment", count = 0 }, HttpStatusCode.BadRequest, "count", "at least one run"),
                     (new { kind = "augment", criterion = "variance" }, HttpStatusCode.BadRequest, "criterion", "maximin"),
                     (new { kind = "infill", criterion = "luck" }, HttpStatusCode.BadRequest, "criterion", "'luck' is not an infill criterion"),
                     (new { kind = "infill", count = 51 }, HttpStatusCode.BadRequest, "count", "at most 50 runs"),
                     (new { kind = "infill", response = "noise" }, HttpStatusCode.UnprocessableEntity, "kind", "has no analysis yet"),
                     (new { kind = "augment", candidateRank = 2 }, HttpStatusCode.BadRequest, "candidateRank", "belongs to verify waves"),
                     (new { kind = "verify", criterion = "variance" }, HttpStatusCode.BadRequest, "criterion", "leave criterion out"),
                 })
        {
            var response = await lead.PostJsonAsync($"/api/studies/{study.Id}/waves", request);
            Assert.Equal(status, response.StatusCode);
            var problem = await response.ReadAsync<ValidationProblem>();
            Assert.Contains(text, problem.Errors[field][0], StringComparison.Ordinal);
        }
        await using var db = App.Db();
        Assert.Equal(1, await db.Waves.CountAsync(w => w.StudyId == study.Id));
    }

    [Fact]
    public async Task An_infill_wave_follows_the_latest_snapshot_and_keeps_clear_of_every_run()
    {
        var study = await TestTeam.CreateStudyAsync(App, AnalysisKit.Study("Infill"));
        using var lead = App.AdminClient();
        foreach (var run in study.Runs!.Take(9)) await AnalysisKit.PostAsync(lead, run);
        var version = await AnalysisKit.ResultSetVersionAsync(App, study.Id);
        var snapshot = await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == version && s.Candidates.Count > 0, "with candidates");

        var response = await lead.PostJsonAsync($"/api/studies/{study.Id}/waves", new WaveRequest("infill", Count: 3));
        Assert.True(response.StatusCode == HttpStatusCode.Created, await response.Content.ReadAsStringAsync());
        var added = await response.ReadAsync<List<RunDto>>();
        Assert.Equal([13, 14, 15], added.Select(r => r.Number));
        Assert.All(added, r => Assert.Equal((2, RunState.Open), (r.Wave, r.State)));
        // Inside the ranges, and apart from the done runs, the three open ones and each other.
        (double, double) At(RunDto r) => (r.Factors["fin_height"].Number, r.Factors["air_velocity"].Number);
        var others = study.Runs!.Concat(added).ToList();
        foreach (var run in added)
        {
            var (h, v) = At(run);
            Assert.InRange(h, 20, 60);
            Assert.InRange(v, 1, 6);
            Assert.All(others.Where(o => o.Number != run.Number), o => Assert.True(
                Math.Abs(At(o).Item1 - h) / 40 + Math.Abs(At(o).Item2 - v) / 5 > 1e-3, $"run {run.Number} lies on run {o.Number}"));
        }
        var wave = Assert.Single(await TestTeam.EventsAsync(App, study.Id, "wave.added"));
        Assert.Equal($"admin added wave 2: 3 infill runs chosen by expected improvement of the overall desirability on analysis {snapshot.Version}, runs 13–15", wave.Detail);
        await using (var db = App.Db())
        {
            var stored = await db.Waves.AsNoTracking().SingleAsync(w => w.StudyId == study.Id && w.Number == 2);
            Assert.Equal(WaveKind.Infill, stored.Kind);
            var record = JsonSerializer.Deserialize<InfillWaveRecord>(stored.RequestJson!, RunfoldJson.Options)!;
            Assert.Equal(("expectedImprovement", snapshot.Version), (record.Criterion, record.SnapshotVersion));
            Assert.Equal([13, 14, 15], record.Runs.Select(r => r.RunNumber));
            Assert.All(record.Runs, r => Assert.Contains("expected improvement", r.Reason, StringComparison.Ordinal));
        }
        version = await AnalysisKit.ResultSetVersionAsync(App, study.Id);
        snapshot = await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == version, "after the wave");
        Assert.Equal((9, 15), (snapshot.BasedOnRuns, snapshot.TotalRuns));

        // Aimed at one response's uncertainty.
        response = await lead.PostJsonAsync($"/api/studies/{study.Id}/waves", new WaveRequest("infill", Count: 1, Criterion: "variance", Response: "Pressure_Drop"));
        Assert.True(response.StatusCode == HttpStatusCode.Created, await response.Content.ReadAsStringAsync());
        Assert.Equal(16, Assert.Single(await response.ReadAsync<List<RunDto>>()).Number);
        var events = await TestTeam.EventsAsync(App, study.Id, "wave.added");
        Assert.Contains(events, e => e.Detail.Contains("1 infill run chosen where the surrogate of pressure_drop is least sure", StringComparison.Ordinal));
    }

    [Fact]
    public async Task A_verification_run_is_compared_with_the_prediction_made_when_it_was_added()
    {
        var study = await TestTeam.CreateStudyAsync(App, AnalysisKit.Study("Verify"));
        using var lead = App.AdminClient();
        foreach (var done in study.Runs!) await AnalysisKit.PostAsync(lead, done);
        var version = await AnalysisKit.ResultSetVersionAsync(App, study.Id);
        var before = await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == version && s.Candidates.Count > 0, "with candidates");
        var best = before.Candidates.Single(c => c.Rank == 1);
        Assert.Null(best.Verification);
        Assert.All(before.Candidates, c => Assert.True(c.Desirability is >= 0 and <= 1));
        Assert.Equal(before.Candidates.Max(c => c.Desirability), best.Desirability);

        var response = await lead.PostJsonAsync($"/api/studies/{study.Id}/waves", new WaveRequest("verify", CandidateRank: 1));
        Assert.True(response.StatusCode == HttpStatusCode.Created, await response.Content.ReadAsStringAsync());
        var run = Assert.Single(await response.ReadAsync<List<RunDto>>());
        Assert.Equal((13, 2), (run.Number, run.Wave));
        foreach (var (factor, value) in best.Factors) Assert.Equal(value.Number, run.Factors[factor].Number, 9);
        // Asked again before the next snapshot shows it: the stored run answers.
        response = await lead.PostJsonAsync($"/api/studies/{study.Id}/waves", new WaveRequest("verify", CandidateRank: 1));
        Assert.Equal(HttpStatusCode.UnprocessableEntity, response.StatusCode);
        Assert.Contains("already has verification run 13 (open)", (await response.ReadAsync<ValidationProblem>()).Errors["candidateRank"][0], StringComparison.Ordinal);

        version = await AnalysisKit.ResultSetVersionAsync(App, study.Id);
        var verifying = await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == version, "with the verification run");
        var pending = Assert.Single(verifying.Candidates, c => c.Verification is not null);
        Assert.Equal((13, RunState.Open, (IReadOnlyList<VerificationValueDto>?)null), (pending.Verification!.RunNumber, pending.Verification.State, pending.Verification.Responses));

        await AnalysisKit.PostAsync(lead, run);
        version = await AnalysisKit.ResultSetVersionAsync(App, study.Id);
        var after = await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == version, "with the verification result");
        var verified = Assert.Single(after.Candidates, c => c.Verification is not null);
        Assert.Equal(0, verified.NearestRunDistance, 9);
        Assert.False(verified.Extrapolating);
        var observed = AnalysisKit.Values(run);
        var cvRmse = before.Responses.ToDictionary(r => r.Name, r => r.Model!.CvRmse);
        Assert.Equal(["mass", "pressure_drop", "thermal_resistance"], verified.Verification!.Responses!.Select(v => v.Response).Order());
        foreach (var v in verified.Verification.Responses!)
        {
            // The prediction of the snapshot the candidate came from, not of the model that has seen the run since.
            Assert.Equal(best.Predicted[v.Response].Mean, v.Predicted);
            Assert.Equal(observed[v.Response], v.Observed, 12);
            Assert.Equal(v.Observed - v.Predicted, v.Error, 12);
            Assert.Equal(cvRmse[v.Response], v.CvRmse);
            Assert.Equal(Math.Abs(v.Error) <= 2 * v.CvRmse, v.WithinCvError);
        }
        var wave = Assert.Single(await TestTeam.EventsAsync(App, study.Id, "wave.added"));
        Assert.StartsWith($"admin added wave 2: a verification run of candidate 1 of analysis {before.Version} (predicted desirability", wave.Detail, StringComparison.Ordinal);
    }

    private static Dictionary<string, FactorValue> Values(double height, double velocity) =>
        new() { ["fin_height"] = FactorValue.Of(height), ["air_velocity"] = FactorValue.Of(velocity) };

    private static PredictRequest Point(double height, double velocity) => new([Values(height, velocity)]);
}

/// <summary>Problem details with validation errors, as the API answers them.</summary>
public sealed record ValidationProblem(int Status, string Title, string? Detail, Dictionary<string, string[]> Errors);
