using System.Diagnostics;
using System.Globalization;
using System.Text.Json;

namespace Runfold.Benchmarks;

/// <summary>What the benchmarks that run a Python side share: Debian's interpreter, a subprocess call, medians and
/// command-line options.</summary>
internal static class BenchmarkTools
{
    public const string Python = "/usr/bin/python3";

    public static readonly JsonSerializerOptions Json = new() { PropertyNameCaseInsensitive = true };

    /// <summary>Runs a script with /usr/bin/python3 and returns its standard output; throws with its error output.</summary>
    public static string RunPython(string scriptPath, params string[] args)
    {
        var start = new ProcessStartInfo(Python) { RedirectStandardOutput = true, RedirectStandardError = true, UseShellExecute = false };
        start.ArgumentList.Add(scriptPath);
        foreach (var a in args) start.ArgumentList.Add(a);
        using var process = Process.Start(start) ?? throw new InvalidOperationException($"{Python} did not start.");
        var stdout = process.StandardOutput.ReadToEndAsync();
        var stderr = process.StandardError.ReadToEndAsync();
        process.WaitForExit();
        if (process.ExitCode != 0) throw new InvalidOperationException($"The Python side failed: {stderr.Result}");
        return stdout.Result;
    }

    public static double Median(IEnumerable<double> values)
    {
        var sorted = values.OrderBy(v => v).ToArray();
        return sorted.Length % 2 == 1 ? sorted[sorted.Length / 2] : (sorted[sorted.Length / 2 - 1] + sorted[sorted.Length / 2]) / 2;
    }

    /// <summary>The integer after <paramref name="name"/> on the command line, or <paramref name="fallback"/>.</summary>
    public static int Option(string[] args, string name, int fallback)
    {
        var i = Array.IndexOf(args, name);
        return i >= 0 && i + 1 < args.Length ? int.Parse(args[i + 1], CultureInfo.InvariantCulture) : fallback;
    }
}
