using System.Diagnostics;
using System.Net.Http.Json;
using Runfold.Deploy.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Deploy.Tests;

/// <summary><c>Runfold.Server demo-agents</c> as the compose demo profile runs it: a separate process against a
/// running server, with nothing but its address and the admin's token.</summary>
public sealed class DemoAgentsCommandTests
{
    [Fact]
    public async Task The_command_creates_the_demo_study_and_its_agents_finish_it()
    {
        await using var server = await JobServer.StartAsync();

        var (exitCode, output) = await RunCommandAsync("demo-agents", "--count", "2", "--url", server.Address.ToString(), "--seconds", "0.01", "--token", JobServer.AdminToken);

        Assert.True(exitCode == 0, output);
        using var client = server.AdminClient();
        var study = Assert.Single((await client.GetFromJsonAsync<List<StudySummary>>("/api/studies", RunfoldJson.Options))!);
        Assert.Equal("Plate-fin heat sink for the inverter module", study.Name);
        Assert.Equal(study.Counts.Total, study.Counts.Done + study.Counts.Failed);
        Assert.Contains("2 simulated analysts", output, StringComparison.Ordinal);
    }

    [Fact]
    public async Task Without_a_token_the_command_says_what_it_needs()
    {
        var (exitCode, output) = await RunCommandAsync("demo-agents", "--count", "2");

        Assert.Equal(2, exitCode);
        Assert.Contains("admin's API token", output, StringComparison.Ordinal);
    }

    private static async Task<(int ExitCode, string Output)> RunCommandAsync(params string[] arguments)
    {
        var start = new ProcessStartInfo("dotnet") { RedirectStandardOutput = true, RedirectStandardError = true, WorkingDirectory = JobServer.ServerFolder() };
        start.ArgumentList.Add(Path.Combine(JobServer.ServerFolder(), "Runfold.Server.dll"));
        foreach (var a in arguments) start.ArgumentList.Add(a);
        start.Environment.Remove("RUNFOLD_TOKEN");
        start.Environment.Remove("RUNFOLD_ADMIN_TOKEN");
        using var process = Process.Start(start)!;
        var stdout = process.StandardOutput.ReadToEndAsync();
        var stderr = process.StandardError.ReadToEndAsync();
        using var timeout = new CancellationTokenSource(TimeSpan.FromMinutes(3));
        await process.WaitForExitAsync(timeout.Token);
        return (process.ExitCode, await stdout + await stderr);
    }
}
