using Runfold.Deploy.Tests.Infrastructure;

namespace Runfold.Deploy.Tests;

public sealed class KubernetesManifestTests
{
    private static readonly string Folder = Repository.PathOf("deploy", "kubernetes");

    private static IEnumerable<string> ManifestFiles() =>
        Directory.GetFiles(Folder, "*.yaml").Where(f => Path.GetFileName(f) != "kustomization.yaml").Order(StringComparer.Ordinal);

    private static readonly IReadOnlyList<Dictionary<object, object>> Objects =
        [.. ManifestFiles().SelectMany(f => Yaml.Documents(File.ReadAllText(f)))];

    private static Dictionary<object, object> Object(string kind, string name) =>
        Objects.Single(o => o.Text("kind") == kind && o.Text("metadata", "name") == name);

    private static Dictionary<object, object> ServerContainer() =>
        Object("Deployment", "runfold-server").Map("spec", "template", "spec", "containers", "0");

    [Fact]
    public async Task Every_manifest_passes_the_Kubernetes_API_schema()
    {
        var (exitCode, output) = await SchemaCheck.KubernetesAsync(ManifestFiles());
        Assert.True(exitCode == 0, output);
    }

    [Fact]
    public async Task The_schema_check_catches_a_wrong_type()
    {
        var broken = Path.Combine(Path.GetTempPath(), $"runfold-k8s-{Guid.NewGuid():N}.yaml");
        await File.WriteAllTextAsync(broken, (await File.ReadAllTextAsync(Path.Combine(Folder, "server.yaml"))).Replace("replicas: 2", "replicas: two", StringComparison.Ordinal));
        try
        {
            var (exitCode, output) = await SchemaCheck.KubernetesAsync([broken]);
            Assert.NotEqual(0, exitCode);
            Assert.Contains("replicas must be integer", output, StringComparison.Ordinal);
        }
        finally { File.Delete(broken); }
    }

    [Fact]
    public void Kustomization_applies_every_manifest_except_the_secret_template()
    {
        var kustomization = Yaml.Documents(File.ReadAllText(Path.Combine(Folder, "kustomization.yaml"))).Single();
        var listed = kustomization.List("resources").Cast<string>().Order(StringComparer.Ordinal);
        var expected = ManifestFiles().Select(Path.GetFileName).Where(n => n != "secret.example.yaml").Order(StringComparer.Ordinal);
        Assert.Equal(expected, listed);
        Assert.Equal("runfold-server", kustomization.Text("images", "0", "name"));
        Assert.Equal("runfold-server", ServerContainer().Text("image"));
    }

    [Fact]
    public void The_server_runs_at_least_two_replicas_with_health_probes_and_resource_requests()
    {
        var deployment = Object("Deployment", "runfold-server");
        Assert.True(int.Parse(deployment.Text("spec", "replicas")!, System.Globalization.CultureInfo.InvariantCulture) >= 2);
        Assert.Equal("0", deployment.Text("spec", "strategy", "rollingUpdate", "maxUnavailable"));
        var container = ServerContainer();
        foreach (var probe in new[] { "readinessProbe", "livenessProbe", "startupProbe" })
        {
            Assert.Equal("/health", container.Text(probe, "httpGet", "path"));
            Assert.Equal("http", container.Text(probe, "httpGet", "port"));
        }
        Assert.NotNull(container.Text("resources", "requests", "cpu"));
        Assert.NotNull(container.Text("resources", "requests", "memory"));
        Assert.NotNull(container.Text("resources", "limits", "memory"));
        var hpa = Object("HorizontalPodAutoscaler", "runfold-server");
        Assert.True(int.Parse(hpa.Text("spec", "minReplicas")!, System.Globalization.CultureInfo.InvariantCulture) >= 2);
        Assert.Equal("1", Object("PodDisruptionBudget", "runfold-server").Text("spec", "minAvailable"));
    }

    [Fact]
    public void The_server_runs_as_the_image_s_unprivileged_user_on_a_read_only_root()
    {
        var pod = Object("Deployment", "runfold-server").Map("spec", "template", "spec");
        Assert.Equal("true", pod.Text("securityContext", "runAsNonRoot"));
        Assert.Equal("1654", pod.Text("securityContext", "runAsUser")); // the ASP.NET image's "app" user (deploy/Dockerfile)
        var container = ServerContainer();
        Assert.Equal("false", container.Text("securityContext", "allowPrivilegeEscalation"));
        Assert.Equal("true", container.Text("securityContext", "readOnlyRootFilesystem"));
        Assert.Equal(["ALL"], container.List("securityContext", "capabilities", "drop").Cast<string>());
        Assert.Contains("USER $APP_UID", Repository.Read("deploy", "Dockerfile"), StringComparison.Ordinal);
    }

    [Fact]
    public void The_server_reads_its_database_and_admin_token_from_the_secret_that_the_template_defines()
    {
        var template = Object("Secret", "runfold");
        var keys = template.Map("stringData").Keys.Cast<string>().ToHashSet();
        var env = ServerContainer().List("env").Cast<Dictionary<object, object>>().ToDictionary(e => e.Text("name")!);
        foreach (var name in new[] { "RUNFOLD_POSTGRES", "RUNFOLD_ADMIN_TOKEN" })
        {
            Assert.Equal("runfold", env[name].Text("valueFrom", "secretKeyRef", "name"));
            Assert.Contains(env[name].Text("valueFrom", "secretKeyRef", "key") ?? "", keys);
        }
        Assert.Equal("0", env["RUNFOLD_DEMO"].Text("value"));
        Assert.StartsWith("Host=runfold-postgres;", template.Text("stringData", "RUNFOLD_POSTGRES"), StringComparison.Ordinal);
    }

    [Fact]
    public void The_ingress_pins_browsers_to_one_replica_for_their_Blazor_circuits()
    {
        var ingress = Object("Ingress", "runfold");
        var annotations = ingress.Map("metadata", "annotations");
        Assert.Equal("cookie", annotations["nginx.ingress.kubernetes.io/affinity"]);
        Assert.Equal("persistent", annotations["nginx.ingress.kubernetes.io/affinity-mode"]);
        Assert.NotNull(annotations["nginx.ingress.kubernetes.io/session-cookie-name"]);
        // WebSockets of open pages stay up for an hour.
        Assert.Equal("3600", annotations["nginx.ingress.kubernetes.io/proxy-read-timeout"]);
        Assert.Equal("runfold-server", ingress.Text("spec", "rules", "0", "http", "paths", "0", "backend", "service", "name"));
        Assert.Equal("http", ingress.Text("spec", "rules", "0", "http", "paths", "0", "backend", "service", "port", "name"));
    }

    [Fact]
    public void PostgreSQL_runs_as_a_stateful_set_with_its_own_volume()
    {
        var postgres = Object("StatefulSet", "runfold-postgres");
        Assert.Equal("postgres:16", postgres.Text("spec", "template", "spec", "containers", "0", "image"));
        Assert.Equal("data", postgres.Text("spec", "volumeClaimTemplates", "0", "metadata", "name"));
        Assert.Equal("/var/lib/postgresql/data", postgres.Text("spec", "template", "spec", "containers", "0", "volumeMounts", "0", "mountPath"));
        Assert.Equal("None", Object("Service", "runfold-postgres").Text("spec", "clusterIP"));
    }

    [Fact]
    public void The_scaling_text_explains_why_several_replicas_are_safe()
    {
        var text = File.ReadAllText(Path.Combine(Folder, "SCALING.md"));
        foreach (var topic in new[] { "advisory lock", "LISTEN/NOTIFY", "conditional", "data-protection keys", "affinity cookie", "Idempotency-Key" })
            Assert.Contains(topic, text, StringComparison.OrdinalIgnoreCase);
    }
}
