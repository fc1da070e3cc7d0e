using System.Diagnostics;
using System.Net;
using System.Net.Http.Headers;
using System.Net.Http.Json;
using System.Net.Sockets;
using System.Text;
using System.Text.Json;
using Npgsql;
using Runfold.Shared.Studies;

namespace Runfold.Deploy.Tests.Infrastructure;

/// <summary>
/// The built server as its own process on a fixed loopback port and a fresh PostgreSQL database (as in a team
/// install), which a test may stop and start again on the same port and data — the way an upgrade or a crash
/// restarts it under a running cluster job.
/// </summary>
public sealed class JobServer : IAsyncDisposable
{
    public const string AdminToken = "rf_job_admin_token_0123456789abcdef";

    private readonly string _connectionString;
    private readonly StringBuilder _output = new();
    private Process? _process;

    private JobServer(string connectionString, Uri address)
    {
        _connectionString = connectionString;
        Address = address;
    }

    public Uri Address { get; }

    public string Output { get { lock (_output) return _output.ToString(); } }

    public static async Task<JobServer> StartAsync()
    {
        var server = new JobServer(await CreateDatabaseAsync(), new Uri($"http://127.0.0.1:{FreePort()}"));
        await server.StartAgainAsync();
        return server;
    }

    /// <summary>Starts the process (again) on the same port and database and waits until /health answers 200.</summary>
    public async Task StartAgainAsync()
    {
        if (_process is { HasExited: false }) throw new InvalidOperationException("The server is already running.");
        var folder = ServerFolder();
        var start = new ProcessStartInfo("dotnet")
        {
            ArgumentList = { Path.Combine(folder, "Runfold.Server.dll"), "--urls", Address.ToString().TrimEnd('/') },
            WorkingDirectory = folder,
            RedirectStandardOutput = true,
            RedirectStandardError = true,
        };
        start.Environment["ASPNETCORE_ENVIRONMENT"] = "Production";
        start.Environment["RUNFOLD_POSTGRES"] = _connectionString;
        start.Environment["RUNFOLD_ADMIN_TOKEN"] = AdminToken;
        start.Environment["RUNFOLD_DEMO"] = "0";
        _process = Process.Start(start) ?? throw new InvalidOperationException("The server process did not start.");
        _process.OutputDataReceived += (_, e) => Append(e.Data);
        _process.ErrorDataReceived += (_, e) => Append(e.Data);
        _process.BeginOutputReadLine();
        _process.BeginErrorReadLine();
        using var http = new HttpClient { BaseAddress = Address, Timeout = TimeSpan.FromSeconds(5) };
        var clock = Stopwatch.StartNew();
        while (clock.Elapsed < TimeSpan.FromSeconds(90))
        {
            if (_process.HasExited) throw new InvalidOperationException($"The server exited with code {_process.ExitCode}:\n{Output}");
            try
            {
                if ((await http.GetAsync("/health")).StatusCode == HttpStatusCode.OK) return;
            }
            catch (HttpRequestException) { /* not listening yet */ }
            catch (TaskCanceledException) { /* slow first answer */ }
            await Task.Delay(200);
        }
        throw new TimeoutException($"The server was not healthy after 90 s:\n{Output}");
    }

    /// <summary>Kills the process, as a crash or a node failure would; the database keeps everything committed.</summary>
    public async Task StopAsync()
    {
        if (_process is null || _process.HasExited) return;
        _process.Kill(entireProcessTree: true);
        await _process.WaitForExitAsync();
    }

    public HttpClient AdminClient(Uri? address = null)
    {
        var client = new HttpClient { BaseAddress = address ?? Address, Timeout = TimeSpan.FromSeconds(30) };
        client.DefaultRequestHeaders.Authorization = new AuthenticationHeaderValue("Bearer", AdminToken);
        return client;
    }

    /// <summary>A small study of the demo scenario's responses: a 2 × 2 full factorial in fin height and air velocity.</summary>
    public async Task<int> CreateStudyAsync()
    {
        using var client = AdminClient();
        var response = await client.PostAsJsonAsync("/api/studies", new CreateStudyRequest(
            "Job script check",
            [new FactorSpec("fin_height", FactorKind.Continuous, 20, 60, Unit: "mm"), new FactorSpec("air_velocity", FactorKind.Continuous, 1, 6, Unit: "m/s")],
            [new ResponseSpec("thermal_resistance", ResponseGoal.Minimize), new ResponseSpec("pressure_drop", ResponseGoal.Minimize), new ResponseSpec("mass", ResponseGoal.Minimize)],
            new DesignSpec(DesignMethod.FullFactorial)), RunfoldJson.Options);
        response.EnsureSuccessStatusCode();
        return (await response.Content.ReadFromJsonAsync<JsonElement>()).GetProperty("id").GetInt32();
    }

    public async Task<IReadOnlyList<RunDto>> RunsAsync(int studyId)
    {
        using var client = AdminClient();
        return (await client.GetFromJsonAsync<List<RunDto>>($"/api/studies/{studyId}/runs", RunfoldJson.Options))!;
    }

    /// <summary>Every stored revision of one run's result, newest first.</summary>
    public async Task<JsonElement> HistoryAsync(int runId)
    {
        using var client = AdminClient();
        return await client.GetFromJsonAsync<JsonElement>($"/api/runs/{runId}");
    }

    private void Append(string? line)
    {
        if (line is null) return;
        lock (_output) _output.AppendLine(line);
    }

    public static string ServerFolder()
    {
        var folder = Environment.GetEnvironmentVariable("RUNFOLD_TEST_SERVER_FOLDER") ?? Repository.PathOf("Server", "bin",
#if DEBUG
            "Debug",
#else
            "Release",
#endif
            "net10.0");
        return File.Exists(Path.Combine(folder, "Runfold.Server.dll"))
            ? folder
            : throw new InvalidOperationException($"The server is not built at {folder}; build the solution first.");
    }

    private static async Task<string> CreateDatabaseAsync()
    {
        var server = Environment.GetEnvironmentVariable("RUNFOLD_TEST_POSTGRES")
                     ?? throw new InvalidOperationException("RUNFOLD_TEST_POSTGRES is not set. Run the tests with Tests/run.sh, which starts a throwaway PostgreSQL cluster.");
        var name = "runfold_job_" + Guid.NewGuid().ToString("N")[..12];
        await using (var connection = new NpgsqlConnection(server))
        {
            await connection.OpenAsync();
            await using var create = new NpgsqlCommand($"CREATE DATABASE {name}", connection);
            await create.ExecuteNonQueryAsync();
        }
        return new NpgsqlConnectionStringBuilder(server) { Database = name, Pooling = false }.ConnectionString;
    }

    private static int FreePort()
    {
        using var listener = new TcpListener(IPAddress.Loopback, 0);
        listener.Start();
        return ((IPEndPoint)listener.LocalEndpoint).Port;
    }

    public async ValueTask DisposeAsync()
    {
        await StopAsync();
        _process?.Dispose();
        var server = Environment.GetEnvironmentVariable("RUNFOLD_TEST_POSTGRES");
        if (server is null) return;
        await using var connection = new NpgsqlConnection(server);
        await connection.OpenAsync();
        await using var drop = new NpgsqlCommand($"DROP DATABASE IF EXISTS {new NpgsqlConnectionStringBuilder(_connectionString).Database} WITH (FORCE)", connection);
        await drop.ExecuteNonQueryAsync();
    }
}
