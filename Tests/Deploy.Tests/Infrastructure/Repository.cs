namespace Runfold.Deploy.Tests.Infrastructure;

/// <summary>Files of the repository the tests check (found from the test's own folder).</summary>
public static class Repository
{
    public static string Root { get; } = FindRoot();

    public static string PathOf(params string[] parts) => System.IO.Path.Combine([Root, .. parts]);

    public static string Read(params string[] parts) => File.ReadAllText(PathOf(parts));

    private static string FindRoot()
    {
        for (var dir = new DirectoryInfo(AppContext.BaseDirectory); dir is not null; dir = dir.Parent)
            if (File.Exists(System.IO.Path.Combine(dir.FullName, "Runfold.slnx"))) return dir.FullName;
        throw new InvalidOperationException("Runfold.slnx was not found above " + AppContext.BaseDirectory);
    }
}
