using System.Diagnostics;
using System.Net;
using System.Net.Sockets;
using System.Text;

namespace Runfold.Browser.Tests.Infrastructure;

/// <summary>
/// The built server started as its own process on a free loopback port, the way a person runs it — here on the
/// embedded SQLite store in a temporary folder, or on PostgreSQL when a connection string is given.
/// </summary>
public sealed class ServerProcess : IAsyncDisposable
{
    public const string AdminToken = "rf_browser_admin_token_0123456789";

    /// <summary>Every server still running. xunit does not dispose a test class whose InitializeAsync threw, so
    /// whatever is left when the test process ends is stopped then.</summary>
    private static readonly HashSet<Process> Running = [];

    static ServerProcess() => AppDomain.CurrentDomain.ProcessExit += (_, _) =>
    {
        lock (Running)
            foreach (var process in Running)
                try { if (!process.HasExited) process.Kill(entireProcessTree: true); }
                catch (InvalidOperationException) { /* already gone */ }
    };

    private readonly Process _process;
    private readonly StringBuilder _output = new();
    private readonly string _dataFolder;

    private ServerProcess(Process process, Uri address, string dataFolder)
    {
        _process = process;
        Address = address;
        _dataFolder = dataFolder;
    }

    public Uri Address { get; }

    /// <summary>The embedded store's folder (RUNFOLD_DATA): tests may write rows the server then reads.</summary>
    public string DataFolder => _dataFolder;

    /// <summary>Everything the server printed so far.</summary>
    public string Output { get { lock (_output) return _output.ToString(); } }

    public static async Task<ServerProcess> StartAsync(IDictionary<string, string>? environment = null)
    {
        var port = FreePort();
        var address = new Uri($"http://127.0.0.1:{port}");
        var dataFolder = Path.Combine(Path.GetTempPath(), "runfold-browser-" + Guid.NewGuid().ToString("N")[..10]);
        Directory.CreateDirectory(dataFolder);
        var serverFolder = ServerFolder();
        var start = new ProcessStartInfo("dotnet")
        {
            ArgumentList = { Path.Combine(serverFolder, "Runfold.Server.dll"), "--urls", address.ToString().TrimEnd('/') },
            WorkingDirectory = serverFolder,
            RedirectStandardOutput = true,
            RedirectStandardError = true,
            UseShellExecute = false,
        };
        start.Environment["ASPNETCORE_ENVIRONMENT"] = "Production";
        start.Environment["RUNFOLD_DATA"] = dataFolder;
        start.Environment["RUNFOLD_ADMIN_TOKEN"] = AdminToken;
        start.Environment["RUNFOLD_DEMO"] = "1";
        start.Environment.Remove("RUNFOLD_POSTGRES");
        foreach (var (key, value) in environment ?? new Dictionary<string, string>()) start.Environment[key] = value;

        var process = Process.Start(start) ?? throw new InvalidOperationException("The server process did not start.");
        lock (Running) Running.Add(process);
        var server = new ServerProcess(process, address, dataFolder);
        process.OutputDataReceived += (_, e) => server.Append(e.Data);
        process.ErrorDataReceived += (_, e) => server.Append(e.Data);
        process.BeginOutputReadLine();
        process.BeginErrorReadLine();
        try
        {
            await server.WaitUntilHealthyAsync(TimeSpan.FromSeconds(90));
        }
        catch
        {
            await server.DisposeAsync();
            throw;
        }
        return server;
    }

    private void Append(string? line)
    {
        if (line is null) return;
        lock (_output) _output.AppendLine(line);
    }

    private async Task WaitUntilHealthyAsync(TimeSpan timeout)
    {
        using var http = new HttpClient { BaseAddress = Address, Timeout = TimeSpan.FromSeconds(5) };
        var clock = Stopwatch.StartNew();
        while (clock.Elapsed < timeout)
        {
            if (_process.HasExited)
                throw new InvalidOperationException($"The server exited with code {_process.ExitCode}:\n{Output}");
            try
            {
                if ((await http.GetAsync("/health")).StatusCode == HttpStatusCode.OK) return;
            }
            catch (HttpRequestException) { /* not listening yet */ }
            catch (TaskCanceledException) { /* slow first answer */ }
            await Task.Delay(200);
        }
        throw new TimeoutException($"The server was not healthy after {timeout.TotalSeconds} s:\n{Output}");
    }

    /// <summary>The server's own build output (its static-asset manifest lives there).</summary>
    private static string ServerFolder()
    {
#if DEBUG
        const string configuration = "Debug";
#else
        const string configuration = "Release";
#endif
        var folder = Path.Combine(RepositoryRoot(), "Server", "bin", configuration, "net10.0");
        return File.Exists(Path.Combine(folder, "Runfold.Server.dll"))
            ? folder
            : throw new InvalidOperationException($"The server is not built at {folder}; build the solution first.");
    }

    public static string RepositoryRoot()
    {
        for (var dir = new DirectoryInfo(AppContext.BaseDirectory); dir is not null; dir = dir.Parent)
            if (File.Exists(Path.Combine(dir.FullName, "Runfold.slnx"))) return dir.FullName;
        throw new InvalidOperationException("Runfold.slnx was not found above " + AppContext.BaseDirectory);
    }

    private static int FreePort()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        return ((IPEndPoint)listener.LocalEndpoint).Port;
    }

    public async ValueTask DisposeAsync()
    {
        if (!_process.HasExited)
        {
            _process.Kill(entireProcessTree: true);
            await _process.WaitForExitAsync();
        }
        lock (Running) Running.Remove(_process);
        _process.Dispose();
        try { Directory.Delete(_dataFolder, recursive: true); }
        catch (IOException) { /* the OS cleans the temp folder */ }
    }
}
