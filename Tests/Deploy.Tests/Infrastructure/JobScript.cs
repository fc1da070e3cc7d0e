using System.Diagnostics;
using System.Text;

namespace Runfold.Deploy.Tests.Infrastructure;

/// <summary>deploy/hpc/runfold-job.sh run by bash as a cluster node would, with a solver script written by the test.</summary>
public sealed class JobScript : IDisposable
{
    private readonly Process _process;
    private readonly StringBuilder _stdout = new();
    private readonly StringBuilder _stderr = new();

    private JobScript(Process process, string folder)
    {
        _process = process;
        Folder = folder;
    }

    /// <summary>The job's working folder: the solver script, and the run folders below runs/.</summary>
    public string Folder { get; }

    public string Stdout { get { lock (_stdout) return _stdout.ToString(); } }

    public string Stderr { get { lock (_stderr) return _stderr.ToString(); } }

    public bool HasExited => _process.HasExited;

    /// <summary>Starts the job script against <paramref name="server"/> for <paramref name="studyId"/>, running
    /// <paramref name="solverScript"/> (bash) as the solver. Short heartbeat and retry intervals keep tests quick.</summary>
    public static JobScript Start(Uri server, int studyId, string solverScript, IDictionary<string, string>? environment = null)
    {
        var folder = Path.Combine(Path.GetTempPath(), "runfold-job-" + Guid.NewGuid().ToString("N")[..10]);
        Directory.CreateDirectory(folder);
        var solver = Path.Combine(folder, "solver.sh");
        File.WriteAllText(solver, "#!/usr/bin/env bash\nset -e\n" + solverScript.Replace("\r\n", "\n", StringComparison.Ordinal));
        if (!OperatingSystem.IsWindows()) File.SetUnixFileMode(solver, UnixFileMode.UserRead | UnixFileMode.UserWrite | UnixFileMode.UserExecute);
        var tokenFile = Path.Combine(folder, "token");
        File.WriteAllText(tokenFile, JobServer.AdminToken + "\n");

        var start = new ProcessStartInfo("bash")
        {
            ArgumentList = { Repository.PathOf("deploy", "hpc", "runfold-job.sh"), "--", "./solver.sh" },
            WorkingDirectory = folder,
            RedirectStandardOutput = true,
            RedirectStandardError = true,
        };
        start.Environment["RUNFOLD_URL"] = server.ToString();
        start.Environment["RUNFOLD_TOKEN_FILE"] = tokenFile;
        start.Environment["RUNFOLD_STUDY"] = studyId.ToString(System.Globalization.CultureInfo.InvariantCulture);
        start.Environment["RUNFOLD_WORKDIR"] = Path.Combine(folder, "runs");
        start.Environment["RUNFOLD_HEARTBEAT_SECONDS"] = "1";
        start.Environment["RUNFOLD_RETRY_SECONDS"] = "1";
        start.Environment["RUNFOLD_RETRIES"] = "8";
        start.Environment.Remove("RUNFOLD_TOKEN");
        foreach (var (key, value) in environment ?? new Dictionary<string, string>()) start.Environment[key] = value;
        var process = Process.Start(start) ?? throw new InvalidOperationException("bash did not start.");
        var job = new JobScript(process, folder);
        process.OutputDataReceived += (_, e) => { if (e.Data is not null) lock (job._stdout) job._stdout.AppendLine(e.Data); };
        process.ErrorDataReceived += (_, e) => { if (e.Data is not null) lock (job._stderr) job._stderr.AppendLine(e.Data); };
        process.BeginOutputReadLine();
        process.BeginErrorReadLine();
        return job;
    }

    /// <summary>Waits for the script to end and returns its exit code.</summary>
    public async Task<int> WaitAsync(TimeSpan? timeout = null)
    {
        using var cancel = new CancellationTokenSource(timeout ?? TimeSpan.FromSeconds(120));
        try
        {
            await _process.WaitForExitAsync(cancel.Token);
        }
        catch (OperationCanceledException)
        {
            _process.Kill(entireProcessTree: true);
            throw new TimeoutException($"The job script did not finish.\nstdout:\n{Stdout}\nstderr:\n{Stderr}");
        }
        _process.WaitForExit(); // drains the output events
        return _process.ExitCode;
    }

    /// <summary>Sends SIGTERM to the script, as scancel or the queue's time limit does.</summary>
    public void Terminate() => Process.Start("kill", ["-TERM", _process.Id.ToString(System.Globalization.CultureInfo.InvariantCulture)])!.WaitForExit();

    /// <summary>Everything the script printed, for assertion messages.</summary>
    public override string ToString() => $"stdout:\n{Stdout}\nstderr:\n{Stderr}";

    public void Dispose()
    {
        if (!_process.HasExited) _process.Kill(entireProcessTree: true);
        _process.Dispose();
        try { Directory.Delete(Folder, recursive: true); }
        catch (IOException) { /* the OS cleans the temp folder */ }
    }
}
