using System.Text.Json;
using Runfold.Deploy.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Deploy.Tests;

/// <summary>deploy/hpc/runfold-job.sh (bash and curl) against the built server on loopback, on PostgreSQL.</summary>
public sealed class JobScriptTests
{
    /// <summary>A solver that reads its factors the two ways the script offers and writes a results file.</summary>
    private const string WorkingSolver = """
        source ./factors.env
        echo "solving fin_height=$fin_height air_velocity=$RUNFOLD_FACTOR_AIR_VELOCITY (run $RUNFOLD_RUN_NUMBER)"
        grep -q '"fin_height":' "$RUNFOLD_FACTORS_JSON"
        sleep "${SOLVER_SECONDS:-0}"
        cat > "$RUNFOLD_RESULTS" <<RESULTS
        # written by the test solver
        thermal_resistance = 0.25
        pressure_drop = $fin_height
        mass = .5e3
        note = converged in 412 iterations
        RESULTS
        """;

    [Fact]
    public async Task A_run_is_claimed_solved_and_uploaded_with_heartbeats_while_the_solver_works()
    {
        await using var server = await JobServer.StartAsync();
        var study = await server.CreateStudyAsync();
        using var job = JobScript.Start(server.Address, study, WorkingSolver, new Dictionary<string, string> { ["SOLVER_SECONDS"] = "3" });

        Assert.True(await job.WaitAsync() == 0, job.ToString());

        var run = (await server.RunsAsync(study)).Single(r => r.State == RunState.Done);
        Assert.Equal(1, run.Number); // the lowest-numbered open run
        Assert.Equal(0.25, run.Result!.Values["thermal_resistance"]);
        Assert.Equal(run.Factors["fin_height"].Number, run.Result.Values["pressure_drop"]);
        Assert.Equal(500, run.Result.Values["mass"]);
        Assert.Equal("converged in 412 iterations", run.Result.Note);
        Assert.Contains($"RUNFOLD_RESULT run=1 state=done revision=1", job.Stdout, StringComparison.Ordinal);
        AssertSaid(job, "Heartbeat: lease extended");

        var factors = JsonSerializer.Deserialize<Dictionary<string, double>>(await File.ReadAllTextAsync(Path.Combine(job.Folder, "runs", "run-1", "factors.json")))!;
        Assert.Equal(run.Factors.ToDictionary(f => f.Key, f => f.Value.Number), factors);
        var revision = (await server.HistoryAsync(run.Id)).GetProperty("revisions")[0];
        Assert.True(revision.GetProperty("solverSeconds").GetDouble() >= 3);
    }

    [Fact]
    public async Task A_failing_solver_is_recorded_as_failed_with_its_exit_code_and_the_end_of_its_log()
    {
        const string failingSolver = """
            for i in $(seq 1 30); do echo "iteration $i residual 1e-$i"; done
            echo "floating point exception: solution diverged" >&2
            exit 7
            """;
        var (exitCode, run, output) = await RunJobAsync(failingSolver);

        Assert.True(exitCode == 0, output); // the outcome was recorded
        Assert.Equal(RunState.Failed, run.State);
        var note = run.Result!.Note!;
        Assert.Contains("exited with code 7", note, StringComparison.Ordinal);
        Assert.Contains("solution diverged", note, StringComparison.Ordinal);
        Assert.Contains("iteration 30 ", note, StringComparison.Ordinal);
        Assert.DoesNotContain("iteration 5 ", note, StringComparison.Ordinal); // only the last 20 lines
        Assert.Empty(run.Result.Values);
    }

    [Fact]
    public async Task A_server_restart_in_the_middle_of_a_run_is_ridden_out_and_the_result_stored_once()
    {
        await using var server = await JobServer.StartAsync();
        var study = await server.CreateStudyAsync();
        using var job = JobScript.Start(server.Address, study, WorkingSolver, new Dictionary<string, string> { ["SOLVER_SECONDS"] = "4" });

        // Once the job holds its run, the server goes down: the heartbeats and then the upload find nobody listening.
        await WaitUntilAsync(() => Task.FromResult(job.Stderr.Contains("Claimed run", StringComparison.Ordinal)), job);
        await server.StopAsync();
        await Task.Delay(TimeSpan.FromSeconds(6));
        await server.StartAgainAsync();

        Assert.True(await job.WaitAsync() == 0, job.ToString());
        AssertSaid(job, "Heartbeat failed");
        AssertSaid(job, "PUT /api/runs/"); // the upload itself was retried
        var runs = await server.RunsAsync(study);
        var done = Assert.Single(runs, r => r.State == RunState.Done);
        Assert.Equal(1, (await server.HistoryAsync(done.Id)).GetProperty("revisions").GetArrayLength());
        Assert.DoesNotContain(runs, r => r.State == RunState.Claimed);
    }

    [Fact]
    public async Task An_upload_whose_answer_is_lost_is_retried_with_the_same_key_and_stored_once()
    {
        await using var server = await JobServer.StartAsync();
        var study = await server.CreateStudyAsync();
        await using var proxy = new DroppingProxy(server.Address);
        using var job = JobScript.Start(proxy.Address, study, WorkingSolver);

        Assert.True(await job.WaitAsync() == 0, job.ToString());

        Assert.Equal(2, proxy.UploadKeys.Count); // the first answer was cut after the server stored it
        Assert.Equal(proxy.UploadKeys[0], proxy.UploadKeys[1]);
        Assert.StartsWith("runfold-job-", proxy.UploadKeys[0], StringComparison.Ordinal);
        var done = Assert.Single(await server.RunsAsync(study), r => r.State == RunState.Done);
        Assert.Equal(1, (await server.HistoryAsync(done.Id)).GetProperty("revisions").GetArrayLength());
        Assert.Contains("state=done revision=1", job.Stdout, StringComparison.Ordinal);
    }

    [Fact]
    public async Task Results_the_server_refuses_are_recorded_as_failed_with_the_server_s_reason()
    {
        const string solverWithWrongName = """
            printf 'thermal_resistence = 0.3\npressure_drop = 12\nmass = 400\n' > "$RUNFOLD_RESULTS"
            """;
        var (exitCode, run, output) = await RunJobAsync(solverWithWrongName);

        Assert.True(exitCode == 4, output);
        Assert.Equal(RunState.Failed, run.State);
        Assert.Contains("refused", run.Result!.Note!, StringComparison.Ordinal);
        Assert.Contains("thermal_resistence", run.Result.Note!, StringComparison.Ordinal);
    }

    [Fact]
    public async Task A_results_file_with_a_value_that_is_not_a_number_fails_the_run_and_names_it()
    {
        var (exitCode, run, output) = await RunJobAsync("""
            printf 'thermal_resistance = 0.3\npressure_drop = n/a\nmass = 400\n' > "$RUNFOLD_RESULTS"
            """);

        Assert.True(exitCode == 0, output);
        Assert.Equal(RunState.Failed, run.State);
        Assert.Contains("the value of pressure_drop is not a number: 'n/a'", run.Result!.Note!, StringComparison.Ordinal);
    }

    [Fact]
    public async Task A_results_file_in_JSON_is_sent_as_it_is()
    {
        var (exitCode, run, output) = await RunJobAsync("""
            echo '{"thermal_resistance": 0.21, "pressure_drop": 17.5, "mass": 640}' > "$RUNFOLD_RESULTS"
            """);

        Assert.True(exitCode == 0, output);
        Assert.Equal(RunState.Done, run.State);
        Assert.Equal(17.5, run.Result!.Values["pressure_drop"]);
    }

    [Fact]
    public async Task A_stopped_job_hands_its_run_back_to_the_open_pool()
    {
        await using var server = await JobServer.StartAsync();
        var study = await server.CreateStudyAsync();
        using var job = JobScript.Start(server.Address, study, WorkingSolver, new Dictionary<string, string> { ["SOLVER_SECONDS"] = "60" });
        await WaitUntilAsync(async () => (await server.RunsAsync(study)).Any(r => r.State == RunState.Claimed), job);

        job.Terminate();

        Assert.Equal(143, await job.WaitAsync());
        Assert.All(await server.RunsAsync(study), r => Assert.Equal(RunState.Open, r.State));
        AssertSaid(job, "released");
    }

    [Fact]
    public async Task Runs_one_after_another_until_none_is_open()
    {
        await using var server = await JobServer.StartAsync();
        var study = await server.CreateStudyAsync();
        using var job = JobScript.Start(server.Address, study, WorkingSolver, new Dictionary<string, string> { ["RUNFOLD_RUNS"] = "0" });

        Assert.True(await job.WaitAsync() == 0, job.ToString());

        Assert.All(await server.RunsAsync(study), r => Assert.Equal(RunState.Done, r.State));
        AssertSaid(job, "has no open run");
        Assert.Equal(4, job.Stdout.Split('\n').Count(l => l.StartsWith("RUNFOLD_RESULT ", StringComparison.Ordinal)));
    }

    [Fact]
    public async Task A_wrong_token_stops_the_job_before_it_claims_anything()
    {
        await using var server = await JobServer.StartAsync();
        var study = await server.CreateStudyAsync();
        using var job = JobScript.Start(server.Address, study, WorkingSolver, new Dictionary<string, string> { ["RUNFOLD_TOKEN"] = "rf_not_a_token" });

        Assert.Equal(2, await job.WaitAsync());
        AssertSaid(job, "refused the token (401)");
        Assert.All(await server.RunsAsync(study), r => Assert.Equal(RunState.Open, r.State));
    }

    /// <summary>One job on a fresh server and study: the exit code, run 1 as the server then holds it, and what the
    /// job printed.</summary>
    private static async Task<(int ExitCode, RunDto Run, string Output)> RunJobAsync(string solver, IDictionary<string, string>? environment = null)
    {
        await using var server = await JobServer.StartAsync();
        var study = await server.CreateStudyAsync();
        using var job = JobScript.Start(server.Address, study, solver, environment);
        var exitCode = await job.WaitAsync();
        return (exitCode, (await server.RunsAsync(study)).Single(r => r.Number == 1), job.ToString());
    }

    /// <summary>The job told its log this (with the whole output in the failure message).</summary>
    private static void AssertSaid(JobScript job, string text) =>
        Assert.True(job.Stderr.Contains(text, StringComparison.Ordinal), $"The job's log does not say '{text}'.\n{job}");

    private static async Task WaitUntilAsync(Func<Task<bool>> condition, JobScript job)
    {
        for (var i = 0; i < 300; i++)
        {
            if (await condition()) return;
            if (job.HasExited) throw new Xunit.Sdk.XunitException("The job ended early.\n" + job);
            await Task.Delay(100);
        }
        throw new TimeoutException("The condition was not met in 30 s.\n" + job);
    }
}
