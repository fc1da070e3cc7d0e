using System.Collections.Concurrent;
using System.Diagnostics;
using System.Globalization;
using System.Net;
using System.Net.Sockets;
using System.Text.RegularExpressions;
using Microsoft.EntityFrameworkCore;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Logging;
using Npgsql;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Server.Hosting;
using Runfold.Server.Runs;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Benchmarks;

/// <summary>
/// Claim throughput and latency with 64 concurrent clients on PostgreSQL, beside pgbench's built-in simple-update
/// script (<c>pgbench -N</c>) on the same cluster in the same run, in alternating rounds. Each claim goes through
/// the server's claim service as a request does (its own service scope and DbContext, the role check, the one
/// <c>FOR UPDATE SKIP LOCKED</c> statement with its audit rows, the answer's runs); HTTP and JSON are not part of it.
/// Starts a throwaway cluster (PostgreSQL binaries from RUNFOLD_TEST_PG_BIN or /usr/lib/postgresql/*/bin), or uses
/// RUNFOLD_BENCH_POSTGRES (a connection string whose user may create databases; pgbench must reach it too).
/// Goal: at least 50 % of pgbench's transactions per second, and no run claimed twice.
/// </summary>
public static partial class ClaimsBenchmark
{
    private static readonly int Clients = int.TryParse(Environment.GetEnvironmentVariable("RUNFOLD_BENCH_CLIENTS"), out var c) ? c : 64;
    private const int Rounds = 3;
    private static readonly TimeSpan RoundLength = TimeSpan.FromSeconds(10);
    private static readonly TimeSpan WarmUp = TimeSpan.FromSeconds(2);

    public static void Register() =>
        BenchmarkRegistry.Register("claims", "claim throughput and p50/p99 latency, 64 clients, beside pgbench -N on the same PostgreSQL", Run);

    private static int Run(string[] args) => RunAsync().GetAwaiter().GetResult();

    private static async Task<int> RunAsync()
    {
        await using var cluster = await Cluster.StartAsync();
        Console.WriteLine($"PostgreSQL at {cluster.Host}:{cluster.Port}; {Clients} clients, {Rounds} alternating rounds of {RoundLength.TotalSeconds:0} s each.");

        cluster.Pgbench("-i", "-s", "16", "-q", "pgbench");
        var (services, caller, studyId) = await PrepareServerAsync(cluster.ConnectionString("runfold_bench"));
        await using var _ = services;

        var pgbench = new List<Measurement>();
        var claims = new List<Measurement>();
        var claimed = new ConcurrentDictionary<int, int>();
        for (var round = 0; round < Rounds; round++)
        {
            pgbench.Add(cluster.PgbenchSimpleUpdate(Clients, RoundLength));
            claims.Add(await ClaimRoundAsync(services, caller, studyId, claimed));
            Console.WriteLine($"  round {round + 1}: pgbench {pgbench[^1].PerSecond:N0}/s, claims {claims[^1].PerSecond:N0}/s");
        }

        var duplicatesInAnswers = claimed.Count(c => c.Value > 1);
        var duplicatesInAudit = await DuplicateClaimsInAuditAsync(services, studyId);
        var pg = Measurement.Median(pgbench);
        var cl = Measurement.Median(claims);
        Console.WriteLine();
        Console.WriteLine("| 64 clients, median of 3 rounds | pgbench -N (simple-update) | Runfold claims (count 1) |");
        Console.WriteLine("|---|---:|---:|");
        Console.WriteLine($"| transactions or claims per second | {pg.PerSecond:N0} | {cl.PerSecond:N0} |");
        Console.WriteLine($"| p50 latency | {pg.P50:0.00} ms | {cl.P50:0.00} ms |");
        Console.WriteLine($"| p99 latency | {pg.P99:0.00} ms | {cl.P99:0.00} ms |");
        Console.WriteLine($"| claims / pgbench | | {cl.PerSecond / pg.PerSecond:P0} (goal ≥ 50 %) |");
        Console.WriteLine($"| runs claimed twice | | {duplicatesInAnswers} in the answers, {duplicatesInAudit} in the audit ({claimed.Count:N0} runs claimed) |");
        return duplicatesInAnswers == 0 && duplicatesInAudit == 0 ? 0 : 1;
    }

    /// <summary>The server's services on their own database: migrated, an admin, and a study with enough open runs
    /// for every round.</summary>
    private static async Task<(ServiceProvider Services, Caller Caller, int StudyId)> PrepareServerAsync(string connectionString)
    {
        var settings = new RunfoldSettings { PostgresConnectionString = connectionString, MaxRuns = 10 };
        var services = new ServiceCollection()
            .AddLogging(l => { l.SetMinimumLevel(LogLevel.Warning); if (Environment.GetEnvironmentVariable("RUNFOLD_BENCH_SQL") == "1") l.AddConsole().AddFilter("Microsoft.EntityFrameworkCore.Database.Command", LogLevel.Information); })
            .AddSingleton(settings)
            .AddSingleton(TimeProvider.System)
            .AddRunfoldStorage(settings)
            .AddSingleton<StudyChangeHub>()
            .AddSingleton<IStudyChangeNotifier>(sp => sp.GetRequiredService<StudyChangeHub>())
            .AddScoped<RunQueries>()
            .AddScoped<RunClaims>()
            .AddSingleton<FactorSpaces>()
            .AddScoped<StudyService>()
            .BuildServiceProvider();
        await services.GetRequiredService<DatabaseInitializer>().MigrateAsync(CancellationToken.None);

        await using var scope = services.CreateAsyncScope();
        var db = scope.ServiceProvider.GetRequiredService<RunfoldDbContext>();
        var admin = new RunfoldUser { Id = Guid.CreateVersion7(), UserName = "admin", NormalizedUserName = "ADMIN", IsAdmin = true, CreatedAt = DateTimeOffset.UtcNow };
        var analyst = new RunfoldUser { Id = Guid.CreateVersion7(), UserName = "bench", NormalizedUserName = "BENCH", CreatedAt = DateTimeOffset.UtcNow };
        db.Users.AddRange(admin, analyst);
        await db.SaveChangesAsync();
        var created = await scope.ServiceProvider.GetRequiredService<StudyService>().CreateAsync(
            new Caller(admin.Id, "admin", true, null),
            new CreateStudyRequest("Claim benchmark",
                [new FactorSpec("fin_height", FactorKind.Continuous, 20, 60, Unit: "mm"), new FactorSpec("air_velocity", FactorKind.Continuous, 1, 6, Unit: "m/s")],
                [new ResponseSpec("thermal_resistance", ResponseGoal.Minimize, Unit: "K/W")],
                new DesignSpec(DesignMethod.FullFactorial, Levels: [2, 2])),
            CancellationToken.None);
        var studyId = created.Value!.Id;
        db.StudyMembers.Add(new StudyMember { StudyId = studyId, UserId = analyst.Id, Role = StudyRole.Analyst, AddedAt = DateTimeOffset.UtcNow });
        await db.SaveChangesAsync();
        // Enough open runs for every round at well over pgbench's rate (the design generator stops at RUNFOLD_MAX_RUNS).
        await db.Database.ExecuteSqlRawAsync("""
            INSERT INTO runs (study_id, wave_id, number, state, factor_values, current_revision, revision_count, version, updated_at)
            SELECT r.study_id, r.wave_id, n, 'open', r.factor_values, 0, 0, 0, now()
            FROM (SELECT study_id, wave_id, factor_values FROM runs WHERE study_id = {0} ORDER BY number LIMIT 1) r,
                 generate_series(5, 400000) n
            """, studyId);
        await db.Database.ExecuteSqlRawAsync("VACUUM ANALYZE runs");
        return (services, new Caller(analyst.Id, "bench", false, 1), studyId);
    }

    private static async Task<Measurement> ClaimRoundAsync(IServiceProvider services, Caller caller, int studyId, ConcurrentDictionary<int, int> claimed)
    {
        var latencies = new ConcurrentBag<double[]>();
        var counted = 0L;
        var failures = 0L;
        var clock = Stopwatch.StartNew();
        var measureFrom = WarmUp;
        var end = WarmUp + RoundLength;
        var workers = Enumerable.Range(0, Clients).Select(_ => Task.Run(async () =>
        {
            var own = new List<double>(100_000);
            while (clock.Elapsed < end)
            {
                var started = clock.Elapsed;
                await using var scope = services.CreateAsyncScope();
                var outcome = await scope.ServiceProvider.GetRequiredService<RunClaims>().ClaimAsync(caller, studyId, new ClaimRequest(1), CancellationToken.None);
                var took = clock.Elapsed - started;
                if (!outcome.IsOk || outcome.Value!.Count != 1) { Interlocked.Increment(ref failures); continue; }
                foreach (var run in outcome.Value) claimed.AddOrUpdate(run.Id, 1, (_, n) => n + 1);
                if (started < measureFrom || clock.Elapsed > end) continue;
                own.Add(took.TotalMilliseconds);
                Interlocked.Increment(ref counted);
            }
            latencies.Add([.. own]);
        })).ToList();
        await Task.WhenAll(workers);
        if (failures > 0) throw new InvalidOperationException($"{failures} claims failed or found no open run.");
        return Measurement.From(counted / RoundLength.TotalSeconds, [.. latencies.SelectMany(l => l)]);
    }

    private static async Task<long> DuplicateClaimsInAuditAsync(IServiceProvider services, int studyId)
    {
        await using var scope = services.CreateAsyncScope();
        var db = scope.ServiceProvider.GetRequiredService<RunfoldDbContext>();
        return await db.AuditEvents.Where(e => e.StudyId == studyId && e.Kind == "run.claimed")
            .GroupBy(e => e.RunId).Where(g => g.Count() > 1).LongCountAsync();
    }

    internal sealed record Measurement(double PerSecond, double P50, double P99)
    {
        public static Measurement From(double perSecond, double[] latenciesMs)
        {
            Array.Sort(latenciesMs);
            return new Measurement(perSecond, Quantile(latenciesMs, 0.50), Quantile(latenciesMs, 0.99));
        }

        public static Measurement Median(List<Measurement> rounds)
        {
            static double Mid(IEnumerable<double> v) { var s = v.Order().ToArray(); return s[s.Length / 2]; }
            return new Measurement(Mid(rounds.Select(r => r.PerSecond)), Mid(rounds.Select(r => r.P50)), Mid(rounds.Select(r => r.P99)));
        }

        private static double Quantile(double[] sorted, double q) => sorted.Length == 0 ? double.NaN : sorted[Math.Min(sorted.Length - 1, (int)(q * sorted.Length))];
    }

    /// <summary>A throwaway PostgreSQL cluster (as Tests/run.sh starts one), or the one RUNFOLD_BENCH_POSTGRES names.</summary>
    internal sealed partial class Cluster : IAsyncDisposable
    {
        private readonly string? _folder;
        private readonly string _bin;
        private readonly string _user;

        private Cluster(string bin, string host, int port, string user, string? folder) => (_bin, Host, Port, _user, _folder) = (bin, host, port, user, folder);

        public string Host { get; }

        public int Port { get; }

        public string ConnectionString(string database) =>
            $"Host={Host};Port={Port};Username={_user};Database={database};Maximum Pool Size=100;No Reset On Close=true;Max Auto Prepare=20";

        public static async Task<Cluster> StartAsync()
        {
            var bin = Environment.GetEnvironmentVariable("RUNFOLD_TEST_PG_BIN")
                      ?? Directory.GetDirectories("/usr/lib/postgresql").Select(d => Path.Combine(d, "bin")).Where(d => File.Exists(Path.Combine(d, "initdb"))).OrderDescending().FirstOrDefault()
                      ?? throw new InvalidOperationException("No PostgreSQL binaries: install Debian's postgresql package or set RUNFOLD_TEST_PG_BIN.");
            Cluster cluster;
            if (Environment.GetEnvironmentVariable("RUNFOLD_BENCH_POSTGRES") is { Length: > 0 } given)
            {
                var b = new NpgsqlConnectionStringBuilder(given);
                cluster = new Cluster(bin, b.Host ?? "127.0.0.1", b.Port, b.Username ?? "postgres", null);
            }
            else
            {
                var folder = Directory.CreateTempSubdirectory("runfold-bench-").FullName;
                if (Environment.UserName == "root") Exec("chown", "postgres", folder);
                var port = FreePort();
                cluster = new Cluster(bin, "127.0.0.1", port, "postgres", folder);
                cluster.AsPostgres(Path.Combine(bin, "initdb"), "-D", Path.Combine(folder, "data"), "-U", "postgres", "-A", "trust", "-E", "UTF8", "--locale=C");
                cluster.AsPostgres(Path.Combine(bin, "pg_ctl"), "-D", Path.Combine(folder, "data"), "-l", Path.Combine(folder, "postgres.log"), "-w", "-t", "60",
                    "-o", $"-c listen_addresses=127.0.0.1 -p {port} -k {folder} -c max_connections=300 -c fsync=off -c synchronous_commit=off -c full_page_writes=off -c shared_buffers=256MB",
                    "start");
            }
            await using var connection = new NpgsqlConnection(cluster.ConnectionString("postgres"));
            await connection.OpenAsync();
            foreach (var name in new[] { "pgbench", "runfold_bench" })
            {
                await new NpgsqlCommand($"DROP DATABASE IF EXISTS {name} WITH (FORCE)", connection).ExecuteNonQueryAsync();
                await new NpgsqlCommand($"CREATE DATABASE {name}", connection).ExecuteNonQueryAsync();
            }
            return cluster;
        }

        public string Pgbench(params string[] args) =>
            AsPostgres(Path.Combine(_bin, "pgbench"), ["-h", Host, "-p", Port.ToString(CultureInfo.InvariantCulture), "-U", _user, .. args]);

        /// <summary>pgbench's built-in simple-update script; latencies from its per-transaction log.</summary>
        public Measurement PgbenchSimpleUpdate(int clients, TimeSpan length)
        {
            var logs = Directory.CreateTempSubdirectory("runfold-pgbench-log-").FullName;
            if (Environment.UserName == "root") Exec("chown", "postgres", logs);
            var output = Pgbench("-N", "-c", clients.ToString(CultureInfo.InvariantCulture), "-j", "2",
                "-T", ((int)length.TotalSeconds).ToString(CultureInfo.InvariantCulture), "-l", "--log-prefix", Path.Combine(logs, "tx"), "pgbench");
            var tps = TpsPattern().Match(output);
            if (!tps.Success) throw new InvalidOperationException("pgbench printed no tps line:\n" + output);
            var latencies = Directory.GetFiles(logs).SelectMany(File.ReadLines)
                .Select(line => line.Split(' ')).Where(f => f.Length > 2)
                .Select(f => double.Parse(f[2], CultureInfo.InvariantCulture) / 1000.0).ToArray();
            Directory.Delete(logs, recursive: true);
            return Measurement.From(double.Parse(tps.Groups[1].Value, CultureInfo.InvariantCulture), latencies);
        }

        private string AsPostgres(string program, params string[] args) =>
            Environment.UserName == "root" ? Exec("runuser", ["-u", "postgres", "--", program, .. args]) : Exec(program, args);

        private static string Exec(string program, params string[] args)
        {
            var start = new ProcessStartInfo(program) { RedirectStandardOutput = true, RedirectStandardError = true, UseShellExecute = false };
            foreach (var a in args) start.ArgumentList.Add(a);
            using var process = Process.Start(start)!;
            var stdout = process.StandardOutput.ReadToEndAsync();
            var stderr = process.StandardError.ReadToEndAsync();
            process.WaitForExit();
            var text = stdout.Result + stderr.Result;
            if (process.ExitCode != 0) throw new InvalidOperationException($"{program} {string.Join(' ', args)} failed ({process.ExitCode}):\n{text}");
            return text;
        }

        private static int FreePort()
        {
            using var listener = new TcpListener(IPAddress.Loopback, 0);
            listener.Start();
            return ((IPEndPoint)listener.LocalEndpoint).Port;
        }

        public ValueTask DisposeAsync()
        {
            NpgsqlConnection.ClearAllPools();
            if (_folder is not null)
            {
                try { AsPostgres(Path.Combine(_bin, "pg_ctl"), "-D", Path.Combine(_folder, "data"), "-m", "immediate", "stop"); }
                catch (InvalidOperationException e) { Console.Error.WriteLine(e.Message); }
                Directory.Delete(_folder, recursive: true);
            }
            return ValueTask.CompletedTask;
        }

        [GeneratedRegex(@"tps = ([0-9.]+) \(without initial connection time\)")]
        private static partial Regex TpsPattern();
    }
}
