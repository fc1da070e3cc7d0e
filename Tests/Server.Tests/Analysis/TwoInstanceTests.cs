using System.Collections.Concurrent;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Npgsql;
using Runfold.Server.Analysis;
using Runfold.Server.Live;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Analysis;

/// <summary>Two server instances on one PostgreSQL database, as a team install with replicas runs: exactly one
/// refits a study (advisory lock), both push every snapshot to their pages and streams (LISTEN/NOTIFY), either
/// answers predictions from the stored models, and the other takes over when the first stops.</summary>
public sealed class TwoInstanceTests
{
    [Fact]
    public async Task Two_instances_compute_each_snapshot_once_and_both_push_it()
    {
        await using var first = await RunfoldApp.StartAsync();
        await using var second = await RunfoldApp.StartAsync(sharedPostgres: first);
        await Task.WhenAll(first.Services.GetRequiredService<PostgresFanOut>().Listening, second.Services.GetRequiredService<PostgresFanOut>().Listening);
        var study = await TestTeam.CreateStudyAsync(first, AnalysisKit.Study("Replicas"));

        var pushed = new[] { new ConcurrentDictionary<int, byte>(), new ConcurrentDictionary<int, byte>() };
        using var followFirst = first.Services.GetRequiredService<StudyLiveHub>().Follow(study.Id, e => Record(pushed[0], e));
        using var followSecond = second.Services.GetRequiredService<StudyLiveHub>().Follow(study.Id, e => Record(pushed[1], e));
        var watchedOnSecond = 0;
        using var watch = second.Services.GetRequiredService<IStudyUpdates>().Watch(study.Id, () =>
        {
            Interlocked.Increment(ref watchedOnSecond);
            return Task.CompletedTask;
        });
        using var viaFirst = first.AdminClient();
        using var viaSecond = second.AdminClient();
        await using var streamOnSecond = await EventStream.OpenAsync(viaSecond, study.Id);

        for (var i = 0; i < 8; i++)
        {
            var client = i % 2 == 0 ? viaFirst : viaSecond;
            await AnalysisKit.PostAsync(client, study.Runs![i]);
            var version = await AnalysisKit.ResultSetVersionAsync(first, study.Id);
            await AnalysisKit.WaitForAsync(i % 2 == 0 ? viaSecond : viaFirst, study.Id, s => s.ResultSetVersion == version, $"of result-set version {version}");
        }

        List<(int Version, long ResultSetVersion)> stored;
        await using (var db = first.Db())
            stored = [.. (await db.AnalysisSnapshots.Where(s => s.StudyId == study.Id).OrderBy(s => s.Version)
                .Select(s => new { s.Version, s.ResultSetVersion }).ToListAsync()).Select(s => (s.Version, s.ResultSetVersion))];
        var statistics = new[] { first, second }.Select(a => a.Services.GetRequiredService<AnalysisCoordinator>().Statistics).ToArray();
        // Computed once: every stored snapshot was computed by one instance — the one that took the study's lock —
        // and the other never started a refit of it.
        Assert.Equal(Enumerable.Range(1, stored.Count), stored.Select(s => s.Version));
        Assert.Equal(stored.Count, statistics.Sum(s => s.SnapshotsStored));
        Assert.Single(statistics, s => s.SnapshotsStored == stored.Count);
        Assert.Single(statistics, s => s.RefitsStarted == 0 && s.SnapshotsStored == 0);
        Assert.Equal(Enumerable.Range(1, 8).Select(v => (long)v), stored.Select(s => s.ResultSetVersion).Distinct());

        // Pushed by both: every snapshot reached the followers of both instances and the stream on the second.
        await AnalysisKit.EventuallyAsync(() => pushed.All(p => stored.All(s => p.ContainsKey(s.Version))), "every snapshot pushed on both instances");
        foreach (var (version, _) in stored)
            await streamOnSecond.NextAsync(b => b.Name == "snapshot" && b.Event!.SnapshotVersion == version, what: $"snapshot {version} on the second instance's stream");
        // Changes committed on the first reach the pages watching on the second.
        await AnalysisKit.EventuallyAsync(() => Volatile.Read(ref watchedOnSecond) >= 8, "eight changes seen on the second instance");
    }

    [Fact]
    public async Task Either_instance_predicts_from_the_stored_models_and_the_other_takes_over_when_one_stops()
    {
        var database = await TestDatabases.CreatePostgresAsync();
        try
        {
            var first = await RunfoldApp.StartAsync(database: database);
            var study = await TestTeam.CreateStudyAsync(first, AnalysisKit.Study("Takeover"));
            using var viaFirst = first.AdminClient();
            foreach (var run in study.Runs!.Take(8)) await AnalysisKit.PostAsync(viaFirst, run);
            var version = await AnalysisKit.ResultSetVersionAsync(first, study.Id);
            await AnalysisKit.WaitForAsync(viaFirst, study.Id, s => s.ResultSetVersion == version, "of the eight results");

            // The second instance starts after the first fitted the models: it rebuilds them from the stored recipes
            // and the exact revisions they were fitted to, and predicts the same.
            await using var second = await RunfoldApp.StartAsync(database: database);
            using var viaSecond = second.AdminClient();
            var request = new PredictRequest([Point(25, 1.5), Point(52, 4.5)]);
            var fromFirst = await (await viaFirst.PostJsonAsync($"/api/studies/{study.Id}/predict", request)).ReadAsync<List<Dictionary<string, PredictedValueDto>>>();
            var fromSecond = await (await viaSecond.PostJsonAsync($"/api/studies/{study.Id}/predict", request)).ReadAsync<List<Dictionary<string, PredictedValueDto>>>();
            Assert.Equal(3, fromSecond[0].Count);
            foreach (var (a, b) in fromFirst.Zip(fromSecond))
                foreach (var (response, value) in a)
                {
                    Assert.Equal(value.Mean, b[response].Mean, 1e-9 * Math.Max(1, Math.Abs(value.Mean)));
                    Assert.Equal(value.Sd!.Value, b[response].Sd!.Value, 1e-7 * Math.Max(1, value.Sd.Value));
                }
            Assert.Equal(0, second.Services.GetRequiredService<AnalysisCoordinator>().Statistics.SnapshotsStored);

            // The first stops: its lock goes with its connection, and the second computes the next snapshot.
            await first.DisposeAsync();
            await AnalysisKit.PostAsync(viaSecond, study.Runs![8]);
            var next = await AnalysisKit.ResultSetVersionAsync(second, study.Id);
            var snapshot = await AnalysisKit.WaitForAsync(viaSecond, study.Id, s => s.ResultSetVersion == next, "after the first instance stopped");
            Assert.Equal(9, snapshot.BasedOnRuns);
            Assert.Equal(1, second.Services.GetRequiredService<AnalysisCoordinator>().Statistics.SnapshotsStored);
        }
        finally
        {
            await TestDatabases.DropPostgresAsync(database);
        }
    }

    [Fact]
    public async Task A_dropped_listening_connection_comes_back_and_events_flow_again()
    {
        await using var first = await RunfoldApp.StartAsync();
        await using var second = await RunfoldApp.StartAsync(sharedPostgres: first);
        var fanOut = second.Services.GetRequiredService<PostgresFanOut>();
        await Task.WhenAll(first.Services.GetRequiredService<PostgresFanOut>().Listening, fanOut.Listening);
        var study = await TestTeam.CreateStudyAsync(first, AnalysisKit.Study("Reconnect"));
        var changes = new ConcurrentQueue<long>();
        using var follow = second.Services.GetRequiredService<StudyLiveHub>().Follow(study.Id, e =>
        {
            if (e.Kind == StudyLiveEventKind.Changed) changes.Enqueue(e.ResultSetVersion);
            return Task.CompletedTask;
        });

        await using (var connection = new NpgsqlConnection(first.PostgresConnectionString))
        {
            await connection.OpenAsync();
            await using var kill = new NpgsqlCommand(
                "SELECT count(pg_terminate_backend(pid)) FROM pg_stat_activity WHERE application_name = $1 AND datname = current_database()", connection)
            {
                Parameters = { new() { Value = PostgresFanOut.ListenerName } },
            };
            Assert.True((long)(await kill.ExecuteScalarAsync())! >= 1);
        }
        await AnalysisKit.EventuallyAsync(() => fanOut.Reconnects >= 1, "the second instance listening again");

        using var viaFirst = first.AdminClient();
        await AnalysisKit.PostAsync(viaFirst, study.Runs![0]);
        await AnalysisKit.EventuallyAsync(() => changes.Contains(1), "the result of the first instance seen on the second");
    }

    private static Task Record(ConcurrentDictionary<int, byte> pushed, StudyLiveEvent e)
    {
        if (e is { Kind: StudyLiveEventKind.Snapshot, SnapshotVersion: { } version }) pushed.TryAdd(version, 0);
        return Task.CompletedTask;
    }

    private static Dictionary<string, FactorValue> Point(double height, double velocity) =>
        new() { ["fin_height"] = FactorValue.Of(height), ["air_velocity"] = FactorValue.Of(velocity) };
}
