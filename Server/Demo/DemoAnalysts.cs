namespace Runfold.Server.Demo;

/// <summary>The invented analysts of the demo (seeded ones and simulated agents) and what goes wrong in their runs.</summary>
internal static class DemoAnalysts
{
    /// <summary>User name and display name. The seeded demo uses the first three, simulated agents the rest.</summary>
    public static readonly IReadOnlyList<(string UserName, string DisplayName)> Roster =
    [
        ("ana.ruiz", "Ana Ruiz"),
        ("ben.okafor", "Ben Okafor"),
        ("chen.li", "Chen Li"),
        ("dora.nagy", "Dora Nagy"),
        ("emil.berg", "Emil Berg"),
        ("farah.aziz", "Farah Aziz"),
        ("goran.petrov", "Goran Petrov"),
        ("hana.sato", "Hana Sato"),
        ("ivo.marek", "Ivo Marek"),
        ("jun.park", "Jun Park"),
    ];

    public const int SeededCount = 3;

    /// <summary>Reasons a conjugate heat-transfer case fails on a cluster (invented for the demo).</summary>
    private static readonly string[] FailureReasons =
    [
        "Mesh quality check failed: 14 cells above skewness 0.95 at the fin roots; the case needs a finer base layer.",
        "Solver diverged at iteration 620 (continuity residual 3.1e+2); under-relaxation too aggressive for this fin spacing.",
        "Job killed by the scheduler: the mesh needed more memory than the node's 64 GB.",
        "Energy residual stalled at 4e-3 after 2000 iterations; result not converged, not uploaded.",
    ];

    public static string FailureReason(Random random)
    {
        ArgumentNullException.ThrowIfNull(random);
        return FailureReasons[random.Next(FailureReasons.Length)];
    }

    /// <summary>A demo solve's relative cost: more and taller fins make a larger mesh (common practice).</summary>
    public static double RelativeCost(HeatSinkDesign design)
    {
        ArgumentNullException.ThrowIfNull(design);
        return 0.6 + 0.8 * design.FinCount / 40.0 + 0.3 * design.FinHeight / 0.060;
    }
}
