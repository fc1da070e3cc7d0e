// Design generators against SciPy on the same machine in the same run: maximin Latin hypercube (n = 100, k = 10)
// beside scipy.stats.qmc.LatinHypercube(optimization="random-cd"), and Sobol' 2^16 points in 20 dimensions.
using System.Diagnostics;
using System.Globalization;
using System.Text.Json;
using Runfold.Shared.Doe;

namespace Runfold.Benchmarks;

public static class DoeBenchmarks
{
    private const int Repeats = 5;
    private const int LhsRuns = 100;
    private const int LhsDimensions = 10;
    private const int SobolPower = 16;
    private const int SobolDimensions = 20;

    private const string ScipyScript = """
        import json, sys, time
        import numpy as np, scipy
        from scipy.spatial.distance import pdist
        from scipy.stats import qmc
        n, k, repeats, m, d = (int(a) for a in sys.argv[1:6])
        out = {"version": scipy.__version__, "lhs": [], "plain": [], "sobol": []}
        for seed in range(1, repeats + 1):
            t = time.perf_counter(); s = qmc.LatinHypercube(d=k, optimization="random-cd", seed=seed).random(n)
            out["lhs"].append([time.perf_counter() - t, float(pdist(s).min())])
            t = time.perf_counter(); s = qmc.LatinHypercube(d=k, seed=seed).random(n)
            out["plain"].append([time.perf_counter() - t, float(pdist(s).min())])
            t = time.perf_counter(); qmc.Sobol(d=d, scramble=False).random_base2(m)
            out["sobol"].append(time.perf_counter() - t)
        print(json.dumps(out))
        """;

    public static void Register() =>
        BenchmarkRegistry.Register("doe", "maximin Latin hypercube vs scipy random-cd (n=100, k=10); Sobol' 2^16 x 20", Run);

    private static int Run(string[] args)
    {
        _ = args;
        Console.WriteLine($"Design generators, median of {Repeats} (seeds 1…{Repeats}); distances in the unit cube.");
        // Warm the JIT (through tiered compilation) before timing, at the timed sizes.
        _ = LatinHypercube.Maximin(LhsRuns, LhsDimensions, 0);
        for (var i = 0; i < 3; i++) _ = SobolSequence.Generate(1 << SobolPower, SobolDimensions, scramble: i == 1);

        var ours = Enumerable.Range(1, Repeats).Select(seed =>
        {
            var watch = Stopwatch.StartNew();
            var unit = LatinHypercube.Maximin(LhsRuns, LhsDimensions, seed);
            return (Seconds: watch.Elapsed.TotalSeconds, Distance: DesignMetrics.MinDistance(unit));
        }).ToList();
        var random = Enumerable.Range(1, Repeats).Select(seed =>
        {
            var watch = Stopwatch.StartNew();
            var unit = LatinHypercube.Random(LhsRuns, LhsDimensions, seed);
            return (Seconds: watch.Elapsed.TotalSeconds, Distance: DesignMetrics.MinDistance(unit));
        }).ToList();
        var sobol = Time(() => SobolSequence.Generate(1 << SobolPower, SobolDimensions));
        var scrambled = Time(() => SobolSequence.Generate(1 << SobolPower, SobolDimensions, scramble: true, seed: 1));

        var scipy = RunScipy(out var scipyProblem);
        var rows = new List<string[]>
        {
            Row("maximin LHS 100 × 10 (ESE, 40 outer iterations)", Median(ours.Select(o => o.Seconds)), Median(ours.Select(o => o.Distance))),
            Row("random LHS 100 × 10 (ours)", Median(random.Select(o => o.Seconds)), Median(random.Select(o => o.Distance))),
        };
        if (scipy is not null)
        {
            rows.Add(Row($"scipy {scipy.Version} LatinHypercube random-cd 100 × 10", Median(scipy.Lhs.Select(l => l[0])), Median(scipy.Lhs.Select(l => l[1]))));
            rows.Add(Row($"scipy {scipy.Version} LatinHypercube (no optimisation)", Median(scipy.Plain.Select(l => l[0])), Median(scipy.Plain.Select(l => l[1]))));
        }
        rows.Add(Row($"Sobol' 2^{SobolPower} × {SobolDimensions} unscrambled (ours)", Median(sobol), null));
        rows.Add(Row($"Sobol' 2^{SobolPower} × {SobolDimensions} scrambled (ours)", Median(scrambled), null));
        if (scipy is not null) rows.Add(Row($"scipy {scipy.Version} Sobol' 2^{SobolPower} × {SobolDimensions} unscrambled", Median(scipy.Sobol), null));
        Print(["design", "median time (s)", "median min distance"], rows);

        if (scipy is null)
        {
            Console.WriteLine($"scipy: not measured ({scipyProblem}). Install Debian's python3-scipy for the comparison.");
            return 0;
        }
        var oursDistance = Median(ours.Select(o => o.Distance));
        var scipyDistance = Median(scipy.Lhs.Select(l => l[1]));
        Console.WriteLine(string.Create(CultureInfo.InvariantCulture,
            $"Ratios: maximin min distance / scipy random-cd = {oursDistance / scipyDistance:0.00}; time ours / scipy random-cd = {Median(ours.Select(o => o.Seconds)) / Median(scipy.Lhs.Select(l => l[0])):0.00}; Sobol' time ours / scipy = {Median(sobol) / Median(scipy.Sobol):0.00}."));
        return 0;
    }

    private sealed record ScipyTimes(string Version, double[][] Lhs, double[][] Plain, double[] Sobol);

    private static ScipyTimes? RunScipy(out string? problem)
    {
        problem = null;
        const string python = "/usr/bin/python3";
        if (!File.Exists(python))
        {
            problem = $"{python} is missing";
            return null;
        }
        var start = new ProcessStartInfo(python)
        {
            RedirectStandardOutput = true,
            RedirectStandardError = true,
            UseShellExecute = false,
        };
        foreach (var arg in new[] { "-c", ScipyScript, $"{LhsRuns}", $"{LhsDimensions}", $"{Repeats}", $"{SobolPower}", $"{SobolDimensions}" })
            start.ArgumentList.Add(arg);
        using var process = Process.Start(start)!;
        var output = process.StandardOutput.ReadToEnd();
        var error = process.StandardError.ReadToEnd();
        process.WaitForExit();
        if (process.ExitCode != 0)
        {
            problem = error.Trim().Split('\n').LastOrDefault() ?? $"exit code {process.ExitCode}";
            return null;
        }
        using var json = JsonDocument.Parse(output);
        var root = json.RootElement;
        double[][] Pairs(string name) => [.. root.GetProperty(name).EnumerateArray().Select(p => new[] { p[0].GetDouble(), p[1].GetDouble() })];
        return new ScipyTimes(root.GetProperty("version").GetString()!, Pairs("lhs"), Pairs("plain"),
            [.. root.GetProperty("sobol").EnumerateArray().Select(t => t.GetDouble())]);
    }

    private static List<double> Time(Action action) => [.. Enumerable.Range(0, Repeats).Select(_ =>
    {
        var watch = Stopwatch.StartNew();
        action();
        return watch.Elapsed.TotalSeconds;
    })];

    private static double Median(IEnumerable<double> values)
    {
        var sorted = values.Order().ToArray();
        return sorted.Length % 2 == 1 ? sorted[sorted.Length / 2] : (sorted[sorted.Length / 2 - 1] + sorted[sorted.Length / 2]) / 2;
    }

    private static string[] Row(string name, double seconds, double? distance) =>
        [name, seconds.ToString("0.0000", CultureInfo.InvariantCulture), distance?.ToString("0.0000", CultureInfo.InvariantCulture) ?? "–"];

    private static void Print(string[] header, List<string[]> rows)
    {
        var widths = header.Select((h, i) => Math.Max(h.Length, rows.Max(r => r[i].Length))).ToArray();
        string Line(string[] cells) => "| " + string.Join(" | ", cells.Select((c, i) => i == 0 ? c.PadRight(widths[i]) : c.PadLeft(widths[i]))) + " |";
        Console.WriteLine(Line(header));
        Console.WriteLine("|" + string.Join("|", widths.Select((w, i) => i == 0 ? new string('-', w + 2) : new string('-', w + 1) + ":")) + "|");
        foreach (var row in rows) Console.WriteLine(Line(row));
    }
}
