using System.Collections.Concurrent;
using System.Net;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Runs;

/// <summary>64 concurrent clients claim a 5,000-run study until it is empty, over real HTTP (in-memory test
/// server) on PostgreSQL: every run is claimed exactly once and no request fails — also when the clients are
/// spread over two server instances on one database.</summary>
public sealed class ClaimConcurrencyTests
{
    private const int Clients = 64;
    private const int Analysts = 8;

    private static readonly Dictionary<string, string?> NoTokenLimit = new() { ["RUNFOLD_TOKEN_PER_MINUTE"] = "10000000" };

    [Fact]
    public async Task Sixty_four_clients_claim_a_5000_run_study_each_run_exactly_once()
    {
        await using var app = await RunfoldApp.StartAsync(extra: NoTokenLimit);
        await ClaimUntilEmptyAsync([app]);
    }

    [Fact]
    public async Task Two_server_instances_on_one_database_never_hand_out_a_run_twice()
    {
        await using var first = await RunfoldApp.StartAsync(extra: NoTokenLimit);
        await using var second = await RunfoldApp.StartAsync(extra: NoTokenLimit, sharedPostgres: first);
        await ClaimUntilEmptyAsync([first, second]);
    }

    private static async Task ClaimUntilEmptyAsync(RunfoldApp[] servers)
    {
        var app = servers[0];
        var study = await TestTeam.CreateStudyAsync(app, TestTeam.HeatSinkStudy("Claim race", 100, 50));
        Assert.Equal(5000, study.Counts.Open);
        var tokens = new List<string>();
        for (var a = 0; a < Analysts; a++)
        {
            tokens.Add(await TestTeam.PersonAsync(app, $"analyst{a}"));
            await TestTeam.JoinAsync(app, study.Id, $"analyst{a}", StudyRole.Analyst);
        }

        var claimed = new ConcurrentBag<(int RunId, int Client)>();
        var failures = new ConcurrentBag<string>();
        using var start = new SemaphoreSlim(0);
        var workers = Enumerable.Range(0, Clients).Select(c => Task.Run(async () =>
        {
            using var client = servers[c % servers.Length].ClientWithToken(tokens[c % Analysts]);
            await start.WaitAsync();
            for (var round = 0; round < 10_000; round++)
            {
                var response = await client.PostJsonAsync($"/api/studies/{study.Id}/claims", new ClaimRequest(1 + c % 3));
                if (response.StatusCode != HttpStatusCode.OK)
                {
                    failures.Add($"{(int)response.StatusCode}: {await response.Content.ReadAsStringAsync()}");
                    return;
                }
                var runs = await response.ReadAsync<List<RunDto>>();
                if (runs.Count == 0) return;
                foreach (var run in runs)
                {
                    Assert.Equal(RunState.Claimed, run.State);
                    claimed.Add((run.Id, c));
                }
            }
        })).ToList();
        start.Release(Clients);
        await Task.WhenAll(workers);

        Assert.Empty(failures);
        var ids = claimed.Select(c => c.RunId).ToList();
        Assert.Equal(5000, ids.Count);
        Assert.Equal(5000, ids.Distinct().Count());
        Assert.True(claimed.Select(c => c.Client).Distinct().Count() > Clients / 2, "Most clients got runs: the claims really ran side by side.");

        await using var db = app.Db();
        Assert.Equal(5000, await db.Runs.CountAsync(r => r.StudyId == study.Id && r.State == RunState.Claimed && r.AssigneeId != null));
        var perRun = await db.AuditEvents.Where(e => e.StudyId == study.Id && e.Kind == "run.claimed")
            .GroupBy(e => e.RunId).Select(g => g.Count()).ToListAsync();
        Assert.Equal(5000, perRun.Count);
        Assert.All(perRun, n => Assert.Equal(1, n));
    }
}
