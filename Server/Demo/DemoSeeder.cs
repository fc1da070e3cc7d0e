using Runfold.Server.Auth;
using Runfold.Server.Results;
using Runfold.Server.Runs;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Demo;

/// <summary>
/// The demo a newcomer opens on an empty embedded database: the heat-sink study with about two thirds of its runs
/// done by three invented analysts, one failed with a reason and two still running, so a model and candidates
/// show at once. Everything goes through the services the API uses — accounts, memberships, claims, result
/// revisions — so audit events, revisions and the result-set version are those of real work.
/// </summary>
public static class DemoSeeder
{
    public const double DoneShare = 2.0 / 3;

    public static async Task<StudyDetail> SeedAsync(IServiceProvider scoped, Caller admin, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(scoped);
        ArgumentNullException.ThrowIfNull(admin);
        var accounts = scoped.GetRequiredService<AccountService>();
        var members = scoped.GetRequiredService<MembershipService>();
        var claims = scoped.GetRequiredService<RunClaims>();
        var results = scoped.GetRequiredService<ResultService>();

        var study = Check(await scoped.GetRequiredService<StudyService>().CreateAsync(admin, DemoStudy.Request(), cancellationToken), "create the demo study");
        var analysts = new List<Caller>();
        foreach (var (userName, displayName) in DemoAnalysts.Roster.Take(DemoAnalysts.SeededCount))
        {
            var user = Check(await accounts.CreateUserAsync(admin, new CreateUserRequest(userName, displayName), cancellationToken), $"create {userName}");
            Check(await members.SetRoleAsync(admin, study.Id, userName, StudyRole.Analyst, cancellationToken), $"add {userName}");
            var person = new Caller(user.User.Id, userName, IsAdmin: false, ApiTokenId: null);
            // The analysts' cluster jobs upload through a personal token, so the audit shows "api" like real jobs.
            var token = Check(await accounts.CreateTokenAsync(person, new TokenRequest("cluster jobs"), cancellationToken), $"make {userName}'s token");
            analysts.Add(person with { ApiTokenId = token.Info.Id });
        }

        var total = study.Counts.Total;
        var toFinish = (int)Math.Round(total * DoneShare);
        var random = new Random(20261201);
        var failedOne = false;
        for (var i = 0; i < toFinish; i++)
        {
            var analyst = analysts[i % analysts.Count];
            var run = Check(await claims.ClaimAsync(analyst, study.Id, new ClaimRequest(1), cancellationToken), "claim a run").Single();
            var design = DemoStudy.Design(run.Factors);
            var solverSeconds = Math.Round(3600 * 2.5 * DemoAnalysts.RelativeCost(design) * (0.8 + 0.4 * random.NextDouble()));
            // One run in the middle of the set failed, as one does.
            var failed = !failedOne && i == toFinish / 2;
            failedOne |= failed;
            var performance = HeatSinkEstimate.Evaluate(design);
            IEnumerable<KeyValuePair<string, ResultValue>> values = failed
                ? []
                : DemoStudy.Results(performance).Select(v => KeyValuePair.Create(v.Key, ResultValue.Of(v.Value)));
            Check(await results.PutAsync(analyst, run.Id, failed ? RunState.Failed : RunState.Done, values,
                failed ? DemoAnalysts.FailureReason(random) : DemoStudy.Note(performance), solverSeconds,
                $"demo-seed-{study.Id}-{run.Id}", cancellationToken), $"upload run {run.Number}");
        }
        // Two runs are still on the cluster.
        for (var i = 0; i < 2 && toFinish + i < total; i++)
            Check(await claims.ClaimAsync(analysts[i % analysts.Count], study.Id, new ClaimRequest(1), cancellationToken), "claim a run");
        return study;
    }

    private static T Check<T>(Outcome<T> outcome, string what) =>
        outcome.IsOk ? outcome.Value! : throw new InvalidOperationException($"The demo could not {what}: {outcome.Message}");
}
