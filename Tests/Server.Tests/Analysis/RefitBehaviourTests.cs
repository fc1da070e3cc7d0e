using System.Collections.Concurrent;
using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.DependencyInjection.Extensions;
using Runfold.Server.Analysis;
using Runfold.Server.Data;
using Runfold.Server.Demo;
using Runfold.Server.Live;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Analysis;

/// <summary>How a refit runs: its stages and progress, cancellation when a newer result overtakes it, the kept
/// choice between comparisons of every model, the embedded store, and the demo's first snapshot at start-up.</summary>
public sealed class RefitBehaviourTests
{
    /// <summary>A stage after sensitivity and candidates that holds the refit until the test lets it go.</summary>
    private sealed class HeldStage : IAnalysisStage
    {
        public volatile bool Hold;
        public readonly SemaphoreSlim Entered = new(0);
        public readonly SemaphoreSlim Go = new(0);

        public string Name => "held by the test";

        public double Weight => 1;

        public async Task RunAsync(AnalysisWork work, IProgress<double> progress, CancellationToken cancellationToken)
        {
            progress.Report(0.5);
            if (Hold)
            {
                Entered.Release();
                await Go.WaitAsync(cancellationToken);
            }
            work.BestDesirability = 0.5;
            progress.Report(1);
        }
    }

    [Fact]
    public async Task A_refit_publishes_its_stages_and_a_newer_result_cancels_it()
    {
        var stage = new HeldStage();
        await using var app = await RunfoldApp.StartAsync(services: s =>
        {
            s.AddSingleton<IAnalysisStage>(stage);
            s.Replace(ServiceDescriptor.Singleton(new AnalysisOptions { ProgressAfter = TimeSpan.Zero, MaxWait = TimeSpan.FromSeconds(30) }));
        });
        var study = await TestTeam.CreateStudyAsync(app, AnalysisKit.Study("Stages"));
        using var lead = app.AdminClient();
        foreach (var run in study.Runs!.Take(4)) await AnalysisKit.PostAsync(lead, run);
        await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == 4, "of the first four results");

        var hub = app.Services.GetRequiredService<StudyLiveHub>();
        var progress = new ConcurrentQueue<AnalysisProgressDto>();
        using var follow = hub.Follow(study.Id, e =>
        {
            if (e.Progress is { } p) progress.Enqueue(p);
            return Task.CompletedTask;
        });
        var statistics = app.Services.GetRequiredService<AnalysisCoordinator>().Statistics;
        stage.Hold = true;
        await AnalysisKit.PostAsync(lead, study.Runs![4]);
        Assert.True(await stage.Entered.WaitAsync(AnalysisKit.Patience), "the refit of the fifth result reached the held stage");
        await AnalysisKit.EventuallyAsync(() => hub.CurrentProgress(study.Id)?.Stage == "held by the test", "the held stage shown as the refit's progress");
        Assert.Equal(5, hub.CurrentProgress(study.Id)!.ResultSetVersion);
        // Followers are served in order but on their own queue, so the events may arrive after the hub shows the stage.
        await AnalysisKit.EventuallyAsync(() => progress.Any(p => p.ResultSetVersion == 5 && p.Stage == "held by the test"), "the held stage's progress delivered to the follower");
        var stages = progress.Where(p => p.ResultSetVersion == 5).Select(p => p.Stage).Distinct().ToList();
        Assert.Equal(["reading runs", "fitting thermal_resistance", "fitting pressure_drop", "fitting mass", "sensitivity", "candidates", "held by the test"], stages);
        var percents = progress.Where(p => p.ResultSetVersion == 5).Select(p => p.Percent).ToList();
        Assert.True(percents.Zip(percents.Skip(1)).All(p => p.First <= p.Second), string.Join(", ", percents));

        // A sixth result overtakes the held refit: it is cancelled and the next one covers both results.
        var cancelled = statistics.RefitsCancelled;
        await AnalysisKit.PostAsync(lead, study.Runs![5]);
        Assert.True(await stage.Entered.WaitAsync(AnalysisKit.Patience), "the refit of the sixth result reached the held stage");
        Assert.Equal(cancelled + 1, statistics.RefitsCancelled);
        stage.Hold = false;
        stage.Go.Release();
        var snapshot = await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == 6, "of the sixth result");
        Assert.Equal(6, snapshot.BasedOnRuns);
        await using var db = app.Db();
        Assert.False(await db.AnalysisSnapshots.AnyAsync(s => s.StudyId == study.Id && s.ResultSetVersion == 5));
        var history = await (await lead.GetAsync($"/api/studies/{study.Id}/analysis/history")).ReadAsync<List<AnalysisHistoryPointDto>>();
        Assert.Equal(0.5, history[^1].BestDesirability); // what a later stage computes is stored with the snapshot
        await AnalysisKit.EventuallyAsync(() => hub.CurrentProgress(study.Id) is null, "no refit shown once the snapshot is stored");
    }

    [Fact]
    public async Task Between_comparisons_the_chosen_models_are_refitted_and_every_model_is_compared_again_as_runs_grow()
    {
        // Every comparison counts as expensive here, so refits keep the choices (as they do for large studies).
        await using var app = await RunfoldApp.StartAsync(services: s =>
            s.Replace(ServiceDescriptor.Singleton(new AnalysisOptions { AlwaysCompareBelow = TimeSpan.Zero })));
        var study = await TestTeam.CreateStudyAsync(app, AnalysisKit.Study("Two tiers", 4, 4));
        using var lead = app.AdminClient();
        foreach (var run in study.Runs!)
        {
            await AnalysisKit.PostAsync(lead, run);
            var version = await AnalysisKit.ResultSetVersionAsync(app, study.Id);
            await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == version, $"of result-set version {version}");
        }
        var statistics = app.Services.GetRequiredService<AnalysisCoordinator>().Statistics;
        await AnalysisKit.EventuallyAsync(() => statistics.Comparisons >= 3, "background comparisons as the runs grew from 4 to 16");

        // A comparison overtaken by the next result hands its choices to that result's refit; the one after the last
        // result is stored as it is. Its snapshot may come a moment after the statistics count it.
        var models = new List<(int BasedOnRuns, ModelSummaryDto Model)>();
        async Task<bool> ComparedAgainAsync()
        {
            await using var db = app.Db();
            var snapshots = (await db.AnalysisSnapshots.AsNoTracking().Where(s => s.StudyId == study.Id).OrderBy(s => s.Version).Select(s => s.PayloadJson).ToListAsync())
                .Select(p => JsonSerializer.Deserialize<AnalysisSnapshotDto>(p, RunfoldJson.Options)!).ToList();
            models = [.. snapshots.SelectMany(s => s.Responses.Where(r => r.Model is not null).Select(r => (s.BasedOnRuns, r.Model!)))];
            return models.Any(m => m.BasedOnRuns > 4 && m.Model.ComparedAtRuns == m.BasedOnRuns);
        }
        var clock = System.Diagnostics.Stopwatch.StartNew();
        while (!await ComparedAgainAsync() && clock.Elapsed < AnalysisKit.Patience) await Task.Delay(100);
        // Kept: refitted to more runs than the comparison saw, saying so.
        Assert.Contains(models, m => m.Model.ComparedAtRuns < m.BasedOnRuns && m.Model.Reason.Contains("Refitted to these", StringComparison.Ordinal));
        // Compared again: beyond the first comparison at 4 runs, snapshots whose models were all compared on their runs.
        Assert.Contains(models, m => m.BasedOnRuns > 4 && m.Model.ComparedAtRuns == m.BasedOnRuns);
        Assert.All(models, m => Assert.True(m.Model.ComparedAtRuns <= m.BasedOnRuns && m.Model.Compared.Count > 1));
        // The first model of each response is in the activity feed.
        var firsts = await TestTeam.EventsAsync(app, study.Id, "analysis.model");
        Assert.Equal(3, firsts.Count(e => e.Detail.StartsWith("The first surrogate of", StringComparison.Ordinal)));
    }

    [Fact]
    public async Task The_embedded_store_analyses_in_the_server_process()
    {
        await using var app = await RunfoldApp.StartAsync(StorageProvider.Sqlite);
        var study = await TestTeam.CreateStudyAsync(app, AnalysisKit.Study("Embedded"));
        using var lead = app.AdminClient();
        foreach (var run in study.Runs!.Take(7)) await AnalysisKit.PostAsync(lead, run);
        var version = await AnalysisKit.ResultSetVersionAsync(app, study.Id);
        var snapshot = await AnalysisKit.WaitForAsync(lead, study.Id, s => s.ResultSetVersion == version, "of the seven results");
        Assert.Equal(7, snapshot.BasedOnRuns);
        Assert.All(snapshot.Responses, r => Assert.NotNull(r.Model));
        var predicted = await (await lead.PostJsonAsync($"/api/studies/{study.Id}/predict", new PredictRequest(
            [new Dictionary<string, FactorValue> { ["fin_height"] = FactorValue.Of(40), ["air_velocity"] = FactorValue.Of(3) }]))).ReadAsync<List<Dictionary<string, PredictedValueDto>>>();
        Assert.Equal(AnalysisKit.Mass(40), predicted[0]["mass"].Mean, 0.5);
    }

    [Fact]
    public async Task The_seeded_demo_has_its_first_snapshot_right_after_start_up()
    {
        await using var app = await RunfoldApp.StartAsync(StorageProvider.Sqlite, demo: true);
        using var admin = app.AdminClient();
        var study = Assert.Single(await (await admin.GetAsync("/api/studies")).ReadAsync<List<StudySummary>>());
        // Nobody posts anything: the start-up sweep finds the seeded results without a snapshot.
        var snapshot = await AnalysisKit.WaitForAsync(admin, study.Id, s => s.BasedOnRuns == study.Counts.Done, "of the seeded runs");
        Assert.Equal((study.Counts.Total, 1), (snapshot.TotalRuns, snapshot.FailedRuns));
        Assert.Equal(DemoStudy.Request().Responses.Select(r => r.Name), snapshot.Responses.Select(r => r.Name));
        Assert.All(snapshot.Responses, r => Assert.NotNull(r.Model));
    }
}
