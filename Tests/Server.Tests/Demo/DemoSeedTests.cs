using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Server.Demo;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Demo;

public sealed class DemoSeedTests
{
    [Theory]
    [InlineData(StorageProvider.Sqlite)]
    [InlineData(StorageProvider.Postgres)]
    public async Task The_seeded_demo_has_two_thirds_of_its_runs_done_through_the_services(StorageProvider provider)
    {
        await using var app = await RunfoldApp.StartAsync(provider, demo: true);
        using var client = app.AdminClient();

        var study = Assert.Single(await (await client.GetAsync("/api/studies")).ReadAsync<List<StudySummary>>());
        Assert.Equal(DemoStudy.Name, study.Name);
        var finished = study.Counts.Done + study.Counts.Failed;
        Assert.Equal((int)Math.Round(study.Counts.Total * DemoSeeder.DoneShare), finished);
        Assert.Equal(1, study.Counts.Failed);
        Assert.Equal(2, study.Counts.Claimed);
        Assert.True(study.Counts.Open > 0);

        var runs = await (await client.GetAsync($"/api/studies/{study.Id}/runs?state=done")).ReadAsync<List<RunDto>>();
        Assert.All(runs, r => Assert.Equal(DemoStudy.Results(HeatSinkEstimate.Evaluate(DemoStudy.Design(r.Factors))), r.Result!.Values));

        await using var db = app.Db();
        // One revision per finished run, each from an analyst's token; the result-set version moved with them.
        Assert.Equal(finished, await db.ResultRevisions.CountAsync());
        Assert.Equal(0, await db.ResultRevisions.CountAsync(v => v.ApiTokenId == null));
        Assert.True((await db.Studies.SingleAsync()).ResultSetVersion >= finished);
        Assert.Equal(finished, await db.AuditEvents.CountAsync(e => e.StudyId == study.Id && e.Kind.StartsWith("result.")));
        Assert.Equal(3, await db.StudyMembers.CountAsync(m => m.StudyId == study.Id && m.Role == StudyRole.Analyst));
    }
}
