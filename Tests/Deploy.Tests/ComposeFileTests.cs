using Runfold.Deploy.Tests.Infrastructure;

namespace Runfold.Deploy.Tests;

public sealed class ComposeFileTests
{
    private static readonly string File = Repository.PathOf("docker-compose.yml");
    private static readonly Dictionary<object, object> Compose = Yaml.Documents(System.IO.File.ReadAllText(File)).Single();

    [Fact]
    public async Task The_compose_file_passes_the_Compose_Specification_schema()
    {
        var (exitCode, output) = await SchemaCheck.ComposeAsync(File);
        Assert.True(exitCode == 0, output);
    }

    [Fact]
    public async Task The_schema_check_catches_a_misspelt_key()
    {
        // The check must be able to fail: the same file with one key misspelt does not pass.
        var broken = Path.Combine(Path.GetTempPath(), $"runfold-compose-{Guid.NewGuid():N}.yml");
        await System.IO.File.WriteAllTextAsync(broken, (await System.IO.File.ReadAllTextAsync(File)).Replace("depends_on:", "depend_on:", StringComparison.Ordinal));
        try
        {
            var (exitCode, output) = await SchemaCheck.ComposeAsync(broken);
            Assert.NotEqual(0, exitCode);
            Assert.Contains("depend_on", output, StringComparison.Ordinal);
        }
        finally { System.IO.File.Delete(broken); }
    }

    [Fact]
    public void PostgreSQL_16_keeps_its_data_in_a_named_volume_and_reports_health()
    {
        Assert.Equal("postgres:16", Compose.Text("services", "postgres", "image"));
        Assert.Contains("runfold-db:/var/lib/postgresql/data", Compose.List("services", "postgres", "volumes").Cast<string>());
        Assert.True(Compose.Map("volumes").ContainsKey("runfold-db"), "runfold-db must be declared as a named volume");
        Assert.Contains("pg_isready", string.Join(' ', Compose.List("services", "postgres", "healthcheck", "test").Cast<string>()), StringComparison.Ordinal);
    }

    [Fact]
    public void The_server_is_built_from_the_Dockerfile_and_uses_PostgreSQL_once_it_is_healthy()
    {
        var server = Compose.Map("services", "server");
        Assert.Equal("deploy/Dockerfile", server.Text("build", "dockerfile"));
        Assert.Equal("service_healthy", server.Text("depends_on", "postgres", "condition"));
        Assert.StartsWith("Host=postgres;", server.Text("environment", "RUNFOLD_POSTGRES"), StringComparison.Ordinal);
        Assert.Contains(":?", server.Text("environment", "RUNFOLD_ADMIN_TOKEN"), StringComparison.Ordinal); // refuses to start without it
        Assert.Contains("health-check", server.List("healthcheck", "test").Cast<string>());
        Assert.Contains(server.List("ports").Cast<string>(), p => p.EndsWith(":8080", StringComparison.Ordinal));
    }

    [Fact]
    public void The_demo_profile_runs_the_simulated_analysts_against_the_server()
    {
        var agents = Compose.Map("services", "demo-agents");
        Assert.Equal(["demo"], agents.List("profiles").Cast<string>());
        Assert.Equal(Compose.Text("services", "server", "image"), agents.Text("image"));
        Assert.Equal("service_healthy", agents.Text("depends_on", "server", "condition"));
        var command = agents.List("command").Cast<string>().ToList();
        Assert.Equal("demo-agents", command[0]);
        Assert.Equal("http://server:8080", command[command.IndexOf("--url") + 1]);
        Assert.NotNull(agents.Text("environment", "RUNFOLD_TOKEN"));
        // Without the profile, `docker compose up` starts only PostgreSQL and the server.
        Assert.All(new[] { "postgres", "server" }, name => Assert.Null(Compose.At("services", name, "profiles")));
    }
}
