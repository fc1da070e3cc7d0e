namespace Runfold.Benchmarks;

/// <summary>The benchmarks by name. Each is a function that prints its own table and returns an exit code.</summary>
public static class BenchmarkRegistry
{
    private static readonly Dictionary<string, (string About, Func<string[], int> Run)> All = new(StringComparer.OrdinalIgnoreCase);

    public static void Register(string name, string about, Func<string[], int> run) => All[name] = (about, run);

    public static int Run(string[] args)
    {
        ArgumentNullException.ThrowIfNull(args);
        RegisterAll();
        if (args.Length == 0 || !All.TryGetValue(args[0], out var benchmark))
        {
            Console.WriteLine("Benchmarks (dotnet run -c Release --project Tests/Benchmarks -- <name>):");
            foreach (var (name, (about, _)) in All.OrderBy(b => b.Key)) Console.WriteLine($"  {name,-14} {about}");
            return args.Length == 0 ? 0 : 2;
        }
        return benchmark.Run(args[1..]);
    }

    /// <summary>Each area adds its line here.</summary>
    private static void RegisterAll()
    {
        DoeBenchmarks.Register();
        ClaimsBenchmark.Register();
        ModelingBenchmarks.Register();
        SensitivityBenchmarks.Register();
        AnalysisLatencyBenchmark.Register();
    }
}
