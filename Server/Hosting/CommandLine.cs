using System.Globalization;
using Runfold.Server.Demo;

namespace Runfold.Server.Hosting;

/// <summary>Commands of the server executable besides serving: <c>health-check</c> (for container health checks,
/// where no curl is installed) and <c>demo-agents</c> (simulated analysts working a running server's demo study).</summary>
public static class CommandLine
{
    public const string DefaultUrl = "http://localhost:5180";

    public static bool IsCommand(string[] args) => args is ["health-check", ..] or ["demo-agents", ..];

    public static async Task<int> RunAsync(string[] args)
    {
        ArgumentNullException.ThrowIfNull(args);
        switch (args[0])
        {
            case "health-check":
                var url = args.Length > 1 ? args[1] : "http://127.0.0.1:8080/health";
                using (var http = new HttpClient { Timeout = TimeSpan.FromSeconds(5) })
                {
                    try
                    {
                        var response = await http.GetAsync(new Uri(url));
                        Console.WriteLine($"{url}: {(int)response.StatusCode}");
                        return response.IsSuccessStatusCode ? 0 : 1;
                    }
                    catch (HttpRequestException e)
                    {
                        Console.Error.WriteLine($"{url}: {e.Message}");
                        return 1;
                    }
                }
            case "demo-agents":
                return await DemoAgentsAsync(args[1..]);
            default:
                Console.Error.WriteLine($"Unknown command '{args[0]}'.");
                return 2;
        }
    }

    /// <summary>
    /// <c>demo-agents --count N [--url U] [--token T] [--study ID] [--seconds S] [--failure-rate F] [--seed K]</c>:
    /// N simulated analysts (default 4) against the server at U (default http://localhost:5180) with the admin's
    /// token T (default RUNFOLD_TOKEN or RUNFOLD_ADMIN_TOKEN), until the demo study has no open run. Ctrl+C stops
    /// them; each releases the run it holds.
    /// </summary>
    private static async Task<int> DemoAgentsAsync(string[] args)
    {
        var url = DefaultUrl;
        var token = Environment.GetEnvironmentVariable("RUNFOLD_TOKEN") ?? Environment.GetEnvironmentVariable("RUNFOLD_ADMIN_TOKEN");
        var options = new DemoAgentOptions();
        for (var i = 0; i < args.Length; i++)
        {
            var value = i + 1 < args.Length ? args[i + 1] : null;
            bool Number(out double n) => double.TryParse(value, NumberStyles.Float, CultureInfo.InvariantCulture, out n);
            switch (args[i])
            {
                case "--count" when int.TryParse(value, out var count) && count is >= 1 and <= 50: options = options with { Count = count }; break;
                case "--url" when value is not null: url = value; break;
                case "--token" when value is not null: token = value; break;
                case "--study" when int.TryParse(value, out var study): options = options with { StudyId = study }; break;
                case "--seconds" when Number(out var seconds) && seconds >= 0: options = options with { MeanSolveSeconds = seconds }; break;
                case "--failure-rate" when Number(out var rate) && rate is >= 0 and <= 1: options = options with { FailureRate = rate }; break;
                case "--seed" when int.TryParse(value, out var seed): options = options with { Seed = seed }; break;
                default:
                    Console.Error.WriteLine($"'{args[i]} {value}' is not understood. Usage: demo-agents --count N [--url URL] [--token TOKEN] " +
                                            "[--study ID] [--seconds MEAN_SOLVE_SECONDS] [--failure-rate 0..1] [--seed N]");
                    return 2;
            }
            i++;
        }
        if (string.IsNullOrWhiteSpace(token))
        {
            Console.Error.WriteLine("The agents need the admin's API token: --token, or RUNFOLD_TOKEN / RUNFOLD_ADMIN_TOKEN in the environment.");
            return 2;
        }
        if (!Uri.TryCreate(url, UriKind.Absolute, out var address))
        {
            Console.Error.WriteLine($"'{url}' is not a server address, for example {DefaultUrl}.");
            return 2;
        }

        using var stop = new CancellationTokenSource();
        Console.CancelKeyPress += (_, e) => { e.Cancel = true; stop.Cancel(); };
        var agents = new DemoAgents(
            () => new HttpClient(new SocketsHttpHandler { AllowAutoRedirect = false, UseCookies = true }) { BaseAddress = address, Timeout = TimeSpan.FromSeconds(60) },
            token, options, line => Console.WriteLine($"{DateTime.Now:HH:mm:ss} {line}"));
        try
        {
            var report = await agents.RunAsync(stop.Token);
            Console.WriteLine($"Study {report.StudyId}: {report.Done} runs done and {report.Failed} failed by {report.Agents.Count} simulated analysts.");
            return 0;
        }
        catch (OperationCanceledException) when (stop.IsCancellationRequested)
        {
            Console.WriteLine("Stopped.");
            return 0;
        }
        catch (Exception e) when (e is HttpRequestException or InvalidOperationException)
        {
            Console.Error.WriteLine($"The demo agents stopped: {e.Message}");
            return 1;
        }
    }
}
