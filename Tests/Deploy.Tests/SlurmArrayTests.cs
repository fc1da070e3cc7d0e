using System.Diagnostics;
using Runfold.Deploy.Tests.Infrastructure;

namespace Runfold.Deploy.Tests;

/// <summary>The Slurm job-array example as Slurm runs it: a copy of the batch file in a spool folder of its own,
/// with SLURM_SUBMIT_DIR set to where sbatch was called. The job script it starts is a stand-in that prints what it
/// was given, so no server is needed.</summary>
public sealed class SlurmArrayTests : IDisposable
{
    private readonly string _folder = Directory.CreateTempSubdirectory("runfold-slurm-").FullName;

    public void Dispose() => Directory.Delete(_folder, recursive: true);

    [Theory]
    [InlineData("deploy/hpc")] // sbatch deploy/hpc/slurm-array.sbatch from the repository root, as the README says
    [InlineData("")]           // sbatch slurm-array.sbatch from inside deploy/hpc
    public async Task The_batch_file_finds_the_job_scripts_from_the_folder_sbatch_was_called_in(string scripts)
    {
        var submit = Directory.CreateDirectory(Path.Combine(_folder, "submit")).FullName;
        var hpc = Directory.CreateDirectory(Path.Combine(submit, scripts)).FullName;
        StandIn(Path.Combine(hpc, "runfold-job.sh"));
        StandIn(Path.Combine(hpc, "run-case.example.sh"));

        var (exitCode, output) = await RunSpooledAsync(submit);
        Assert.True(exitCode == 0, output);
        Assert.Contains($"job script {Path.Combine(hpc, "runfold-job.sh")} got: -- {Path.Combine(hpc, "run-case.example.sh")}", output, StringComparison.Ordinal);
        Assert.Contains($"workdir {Path.Combine(submit, "runs")}", output, StringComparison.Ordinal);
    }

    [Fact]
    public async Task Without_the_job_scripts_it_says_where_it_looked()
    {
        var submit = Directory.CreateDirectory(Path.Combine(_folder, "empty")).FullName;
        var (exitCode, output) = await RunSpooledAsync(submit);
        Assert.Equal(2, exitCode);
        Assert.Contains($"runfold-job.sh is not in {submit}; submit from the repository root or set RUNFOLD_HPC_DIR.", output, StringComparison.Ordinal);
    }

    /// <summary>A script that prints its own path, its arguments and the work folder it was handed.</summary>
    private static void StandIn(string path)
    {
        File.WriteAllText(path, "#!/bin/bash\necho \"job script $0 got: $*\"\necho \"workdir $RUNFOLD_WORKDIR\"\n");
        if (!OperatingSystem.IsWindows()) File.SetUnixFileMode(path, UnixFileMode.UserRead | UnixFileMode.UserWrite | UnixFileMode.UserExecute);
    }

    private async Task<(int ExitCode, string Output)> RunSpooledAsync(string submit)
    {
        var spool = Directory.CreateDirectory(Path.Combine(_folder, "spool")).FullName;
        var copy = Path.Combine(spool, "slurm_script");
        File.Copy(Repository.PathOf("deploy", "hpc", "slurm-array.sbatch"), copy, overwrite: true);
        var start = new ProcessStartInfo("bash", [copy]) { RedirectStandardOutput = true, RedirectStandardError = true, WorkingDirectory = spool };
        start.Environment["SLURM_SUBMIT_DIR"] = submit;
        start.Environment["HOME"] = _folder;
        start.Environment.Remove("RUNFOLD_HPC_DIR");
        using var process = Process.Start(start)!;
        var stdout = process.StandardOutput.ReadToEndAsync();
        var stderr = process.StandardError.ReadToEndAsync();
        await process.WaitForExitAsync();
        return (process.ExitCode, await stdout + await stderr);
    }
}
