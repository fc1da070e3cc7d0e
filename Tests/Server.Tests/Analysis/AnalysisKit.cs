using System.Diagnostics;
using System.Net;
using System.Net.Http.Json;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Analysis;

/// <summary>
/// Studies for the live-analysis tests: two factors of the heat-sink scenario and its three responses, whose
/// results come from low-order polynomials of the factors (a quadratic response surface reproduces them exactly,
/// so predictions can be checked against the formula).
/// </summary>
public static class AnalysisKit
{
    public static readonly TimeSpan Patience = TimeSpan.FromSeconds(60);

    public static CreateStudyRequest Study(string name, int levelsHeight = 4, int levelsVelocity = 3) =>
        TestTeam.HeatSinkStudy(name, levelsHeight, levelsVelocity);

    public static double ThermalResistance(double height, double velocity) => 1.2 - 0.01 * height - 0.08 * velocity + 0.0008 * height * velocity;

    public static double PressureDrop(double height, double velocity) => 2 + 0.3 * velocity * velocity + 0.05 * height;

    public static double Mass(double height) => 40 + 2.5 * height;

    public static Dictionary<string, double> Values(RunDto run)
    {
        ArgumentNullException.ThrowIfNull(run);
        var h = run.Factors["fin_height"].Number;
        var v = run.Factors["air_velocity"].Number;
        return new() { ["thermal_resistance"] = ThermalResistance(h, v), ["pressure_drop"] = PressureDrop(h, v), ["mass"] = Mass(h) };
    }

    /// <summary>Posts the run's result as the lead (who may post for any run); failed runs get a reason.</summary>
    public static async Task PostAsync(HttpClient client, RunDto run, bool failed = false)
    {
        ArgumentNullException.ThrowIfNull(client);
        ArgumentNullException.ThrowIfNull(run);
        var body = failed
            ? (object)new { state = "failed", note = "the mesh did not converge" }
            : new { state = "done", values = Values(run) };
        var response = await client.PutAsJsonAsync($"/api/runs/{run.Id}/result", body, RunfoldJson.Options);
        Assert.True(response.StatusCode == HttpStatusCode.OK, await response.Content.ReadAsStringAsync());
    }

    public static async Task<AnalysisSnapshotDto?> LatestAsync(HttpClient client, int studyId)
    {
        ArgumentNullException.ThrowIfNull(client);
        var response = await client.GetAsync($"/api/studies/{studyId}/analysis");
        if (response.StatusCode == HttpStatusCode.NotFound) return null;
        Assert.True(response.StatusCode == HttpStatusCode.OK, await response.Content.ReadAsStringAsync());
        return await response.ReadAsync<AnalysisSnapshotDto>();
    }

    /// <summary>Polls the latest snapshot until <paramref name="until"/> holds (or fails after <see cref="Patience"/>).</summary>
    public static async Task<AnalysisSnapshotDto> WaitForAsync(HttpClient client, int studyId, Func<AnalysisSnapshotDto, bool> until, string what)
    {
        ArgumentNullException.ThrowIfNull(until);
        var clock = Stopwatch.StartNew();
        AnalysisSnapshotDto? latest = null;
        while (clock.Elapsed < Patience)
        {
            latest = await LatestAsync(client, studyId);
            if (latest is not null && until(latest)) return latest;
            await Task.Delay(50);
        }
        Assert.Fail($"No snapshot {what} within {Patience.TotalSeconds} s; the latest: version {latest?.Version}, based on {latest?.BasedOnRuns} runs, result-set version {latest?.ResultSetVersion}.");
        return null!;
    }

    public static async Task<long> ResultSetVersionAsync(RunfoldApp app, int studyId)
    {
        ArgumentNullException.ThrowIfNull(app);
        await using var db = app.Db();
        return db.Studies.Where(s => s.Id == studyId).Select(s => s.ResultSetVersion).First();
    }

    /// <summary>Polls until <paramref name="condition"/> holds (or fails after <see cref="Patience"/>).</summary>
    public static async Task EventuallyAsync(Func<bool> condition, string what)
    {
        ArgumentNullException.ThrowIfNull(condition);
        var clock = Stopwatch.StartNew();
        while (!condition())
        {
            Assert.True(clock.Elapsed < Patience, $"Not within {Patience.TotalSeconds} s: {what}.");
            await Task.Delay(50);
        }
    }
}
