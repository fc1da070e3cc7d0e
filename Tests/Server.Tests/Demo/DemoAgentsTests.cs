using Microsoft.AspNetCore.Mvc.Testing;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Demo;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Demo;

public sealed class DemoAgentsTests
{
    [Fact]
    public async Task Simulated_analysts_finish_the_demo_study_over_the_API()
    {
        await using var app = await RunfoldApp.StartAsync();
        var log = new List<string>();
        var agents = new DemoAgents(
            () => app.CreateClient(new WebApplicationFactoryClientOptions { AllowAutoRedirect = false, HandleCookies = true }),
            RunfoldApp.AdminToken,
            new DemoAgentOptions { Count = 3, MeanSolveSeconds = 0.02, FailureRate = 0.1, Seed = 3 },
            line => { lock (log) log.Add(line); });

        var report = await agents.RunAsync(CancellationToken.None);

        using var client = app.AdminClient();
        var runs = await (await client.GetAsync($"/api/studies/{report.StudyId}/runs")).ReadAsync<List<RunDto>>();
        Assert.NotEmpty(runs);
        Assert.All(runs, r => Assert.Contains(r.State, new[] { RunState.Done, RunState.Failed }));
        Assert.Equal(runs.Count, report.Done + report.Failed);
        Assert.Equal(3, report.Agents.Count);
        Assert.All(report.Agents, a => Assert.True(a.Done + a.Failed > 0, $"{a.UserName} did no run"));

        // Every done run carries the heat-sink estimate of its own factors; every failed one a reason.
        foreach (var run in runs)
        {
            if (run.State == RunState.Done)
                Assert.Equal(DemoStudy.Results(HeatSinkEstimate.Evaluate(DemoStudy.Design(run.Factors))), run.Result!.Values);
            else
                Assert.False(string.IsNullOrWhiteSpace(run.Result!.Note));
            Assert.Equal(1, run.Result.Revision);
            Assert.Contains(run.Assignee, report.Agents.Select(a => a.UserName));
        }

        // Each analyst is its own account, an analyst of the study, working through its own API token.
        await using var db = app.Db();
        var names = report.Agents.Select(a => a.UserName).ToList();
        var members = await db.StudyMembers.Where(m => m.StudyId == report.StudyId && names.Contains(m.User!.UserName!)).ToListAsync();
        Assert.Equal(3, members.Count);
        Assert.All(members, m => Assert.Equal(StudyRole.Analyst, m.Role));
        var tokens = await db.ApiTokens.Where(t => names.Contains(t.User!.UserName!)).Select(t => t.Id).ToListAsync();
        Assert.Equal(3, tokens.Count);
        var revisionTokens = await db.ResultRevisions.Where(v => db.Runs.Any(r => r.Id == v.RunId && r.StudyId == report.StudyId))
            .Select(v => v.ApiTokenId).Distinct().ToListAsync();
        Assert.All(revisionTokens, t => Assert.Contains(t!.Value, tokens));
        Assert.Contains(log, l => l.Contains("claimed run", StringComparison.Ordinal));
    }

    [Fact]
    public async Task Stopped_agents_hand_their_runs_back()
    {
        await using var app = await RunfoldApp.StartAsync();
        using var stop = new CancellationTokenSource();
        var agents = new DemoAgents(
            () => app.CreateClient(new WebApplicationFactoryClientOptions { AllowAutoRedirect = false, HandleCookies = true }),
            RunfoldApp.AdminToken,
            new DemoAgentOptions { Count = 2, MeanSolveSeconds = 30 },
            line => { if (line.Contains("claimed run", StringComparison.Ordinal)) stop.CancelAfter(TimeSpan.FromMilliseconds(300)); });

        var report = await agents.RunAsync(stop.Token);

        using var client = app.AdminClient();
        var runs = await (await client.GetAsync($"/api/studies/{report.StudyId}/runs")).ReadAsync<List<RunDto>>();
        Assert.All(runs, r => Assert.Equal(RunState.Open, r.State));
        Assert.Equal(0, report.Done + report.Failed);
    }
}
