using Runfold.Deploy.Tests.Infrastructure;

namespace Runfold.Deploy.Tests;

/// <summary>The image definition (no Docker engine here: the file is checked, and what it copies and runs).</summary>
public sealed class DockerfileTests
{
    private static readonly string[] Lines = [.. Repository.Read("deploy", "Dockerfile").Split('\n').Select(l => l.Trim())];

    private static IEnumerable<string> Instructions(string keyword) =>
        Lines.Where(l => l.StartsWith(keyword + " ", StringComparison.Ordinal));

    [Fact]
    public void It_builds_with_the_SDK_and_runs_on_the_ASP_NET_runtime()
    {
        var stages = Instructions("FROM").ToList();
        Assert.Equal(2, stages.Count);
        Assert.StartsWith("FROM mcr.microsoft.com/dotnet/sdk:10.0 AS build", stages[0], StringComparison.Ordinal);
        Assert.StartsWith("FROM mcr.microsoft.com/dotnet/aspnet:10.0", stages[1], StringComparison.Ordinal);
        Assert.Contains(Instructions("COPY"), l => l.StartsWith("COPY --from=build", StringComparison.Ordinal));
    }

    [Fact]
    public void It_runs_as_a_non_root_user_with_a_health_check_on_the_server_itself()
    {
        var user = Instructions("USER").Single();
        Assert.NotEqual("USER root", user);
        Assert.NotEqual("USER 0", user);
        var healthCheck = Instructions("HEALTHCHECK").Single();
        Assert.Contains("\"health-check\"", healthCheck, StringComparison.Ordinal);
        Assert.Equal("ENTRYPOINT [\"dotnet\", \"Runfold.Server.dll\"]", Instructions("ENTRYPOINT").Single());
    }

    [Fact]
    public void Everything_it_copies_from_the_repository_exists()
    {
        foreach (var copy in Instructions("COPY").Where(l => !l.Contains("--from", StringComparison.Ordinal)))
        {
            var parts = copy.Split(' ', StringSplitOptions.RemoveEmptyEntries);
            foreach (var source in parts[1..^1])
                Assert.True(File.Exists(Repository.PathOf(source)) || Directory.Exists(Repository.PathOf(source)), $"{copy}: {source} is not in the repository");
        }
        // The publish step builds the server project that the solution builds.
        Assert.Contains(Instructions("RUN"), l => l.Contains("dotnet publish Server/Runfold.Server.csproj", StringComparison.Ordinal));
    }

    [Fact]
    public void The_build_context_leaves_out_build_output_and_tests()
    {
        var ignore = Repository.Read("deploy", "Dockerfile.dockerignore").Split('\n').Select(l => l.Trim()).ToHashSet();
        Assert.Contains("**/bin/", ignore);
        Assert.Contains("**/obj/", ignore);
        Assert.Contains("Tests/", ignore);
    }
}
