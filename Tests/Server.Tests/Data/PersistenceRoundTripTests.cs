using Microsoft.EntityFrameworkCore;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Data;

/// <summary>Everything the model stores comes back unchanged, on both providers, through the same test.</summary>
public sealed class PersistenceRoundTripTests
{
    [Theory]
    [InlineData(StorageProvider.Postgres)]
    [InlineData(StorageProvider.Sqlite)]
    public async Task A_study_with_runs_revisions_audit_and_snapshot_reads_back_as_written(StorageProvider provider)
    {
        await using var store = await TestStore.CreateAsync(provider);
        var at = new DateTimeOffset(2026, 11, 30, 8, 15, 30, TimeSpan.Zero);
        var userId = Guid.CreateVersion7();
        int studyId, runId;

        await using (var db = store.Db())
        {
            db.Users.Add(new RunfoldUser { Id = userId, UserName = "lena", NormalizedUserName = "LENA", DisplayName = "Lena Ortiz", CreatedAt = at });
            db.ApiTokens.Add(new ApiToken { UserId = userId, Name = "cluster", TokenHash = new string('a', 64), Prefix = "rf_abc", CreatedAt = at });
            var study = new Study
            {
                Name = "Round trip",
                Description = "All fields",
                CreatedAt = at,
                CreatedById = userId,
                DesignJson = """{"method":"fullFactorial"}""",
                LeaseHours = 6.5,
                Factors =
                [
                    new StudyFactor { Position = 0, Name = "fin_height", Kind = FactorKind.Continuous, Low = 20, High = 60, Unit = "mm" },
                    new StudyFactor { Position = 1, Name = "alloy", Kind = FactorKind.Categorical, Levels = ["6063", "1050", "copper"] },
                    new StudyFactor { Position = 2, Name = "air_velocity", Kind = FactorKind.Continuous, Low = 1, High = 6, Scale = FactorScale.Log },
                ],
                Responses = [new StudyResponse { Position = 0, Name = "pressure_drop", Goal = ResponseGoal.Minimize, Upper = 60, Weight = 0.5, Unit = "Pa", Noisy = true }],
                Members = [new StudyMember { UserId = userId, Role = StudyRole.Analyst, AddedAt = at }],
                Waves = [new Wave { Number = 1, Kind = WaveKind.Initial, CreatedAt = at }],
            };
            db.Studies.Add(study);
            await db.SaveChangesAsync();
            studyId = study.Id;
            var run = new Run
            {
                StudyId = studyId, WaveId = study.Waves[0].Id, Number = 1, State = RunState.Claimed,
                FactorValues = [42.5, 2, 3.25], AssigneeId = userId, ClaimedAt = at, LeaseExpiresAt = at.AddHours(6.5), UpdatedAt = at,
            };
            db.Runs.Add(run);
            await db.SaveChangesAsync();
            runId = run.Id;
            db.ResultRevisions.Add(new ResultRevision
            {
                RunId = runId, Revision = 1, State = RunState.Done, Values = new() { ["pressure_drop"] = 41.75 },
                Note = "mesh level 3", SolverSeconds = 5400.5, AuthorId = userId, CreatedAt = at, IdempotencyKey = "job-17",
            });
            db.AuditEvents.Add(new AuditEvent { StudyId = studyId, RunId = runId, ActorId = userId, Source = "api", Kind = "run.claimed", Detail = "lena claimed run 1", At = at });
            db.AnalysisSnapshots.Add(new AnalysisSnapshot { StudyId = studyId, Version = 1, ResultSetVersion = 3, BasedOnRuns = 1, ComputedAt = at, PayloadJson = """{"version":1}""" });
            await db.SaveChangesAsync();
        }

        await using (var db = store.Db())
        {
            var study = await db.Studies.AsNoTracking().Include(s => s.Factors).Include(s => s.Responses).Include(s => s.Members).Include(s => s.Waves)
                .SingleAsync(s => s.Id == studyId);
            Assert.Equal("Round trip", study.Name);
            Assert.Equal(6.5, study.LeaseHours);
            Assert.Equal(at, study.CreatedAt);
            var factors = study.Factors.OrderBy(f => f.Position).ToList();
            Assert.Equal(["6063", "1050", "copper"], factors[1].Levels);
            Assert.Equal(FactorScale.Log, factors[2].Scale);
            Assert.Equal("mm", factors[0].Unit);
            var response = Assert.Single(study.Responses);
            Assert.Equal((ResponseGoal.Minimize, 60.0, 0.5, true), (response.Goal, response.Upper!.Value, response.Weight, response.Noisy));
            Assert.Equal(StudyRole.Analyst, Assert.Single(study.Members).Role);
            Assert.Equal(WaveKind.Initial, Assert.Single(study.Waves).Kind);

            var run = await db.Runs.AsNoTracking().SingleAsync(r => r.Id == runId);
            Assert.Equal([42.5, 2, 3.25], run.FactorValues);
            Assert.Equal(RunState.Claimed, run.State);
            Assert.Equal(at.AddHours(6.5), run.LeaseExpiresAt);
            Assert.Equal(userId, run.AssigneeId);

            var revision = await db.ResultRevisions.AsNoTracking().SingleAsync(r => r.RunId == runId);
            Assert.Equal(41.75, revision.Values["pressure_drop"]);
            Assert.Equal(("mesh level 3", 5400.5, "job-17"), (revision.Note, revision.SolverSeconds!.Value, revision.IdempotencyKey));

            // Instants compare and sort in the database on both providers (SQLite stores them as integers).
            Assert.Equal(1, await db.Runs.CountAsync(r => r.LeaseExpiresAt > at));
            Assert.Equal("run.claimed", (await db.AuditEvents.AsNoTracking().Where(e => e.At >= at).SingleAsync()).Kind);
            Assert.Equal(3, (await db.AnalysisSnapshots.AsNoTracking().SingleAsync()).ResultSetVersion);
            Assert.Equal("cluster", (await db.ApiTokens.AsNoTracking().Include(t => t.User).SingleAsync()).Name);
        }
    }

    [Theory]
    [InlineData(StorageProvider.Postgres)]
    [InlineData(StorageProvider.Sqlite)]
    public async Task Run_numbers_are_unique_within_a_study(StorageProvider provider)
    {
        await using var store = await TestStore.CreateAsync(provider);
        await using var db = store.Db();
        var userId = Guid.CreateVersion7();
        db.Users.Add(new RunfoldUser { Id = userId, UserName = "u", NormalizedUserName = "U" });
        var study = new Study { Name = "s", CreatedById = userId, DesignJson = "{}", Waves = [new Wave { Number = 1 }] };
        db.Studies.Add(study);
        await db.SaveChangesAsync();
        db.Runs.Add(new Run { StudyId = study.Id, WaveId = study.Waves[0].Id, Number = 7 });
        db.Runs.Add(new Run { StudyId = study.Id, WaveId = study.Waves[0].Id, Number = 7 });
        await Assert.ThrowsAsync<DbUpdateException>(() => db.SaveChangesAsync());
    }
}
