namespace Runfold.Server.Hosting;

/// <summary>Commands of the server executable besides serving: <c>health-check</c> (for container health checks,
/// where no curl is installed).</summary>
public static class CommandLine
{
    public static bool IsCommand(string[] args) => args is ["health-check", ..];

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
            default:
                Console.Error.WriteLine($"Unknown command '{args[0]}'.");
                return 2;
        }
    }
}
