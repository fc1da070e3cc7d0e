using Runfold.Shared.Doe;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Tests.Optimization;

/// <summary>A small heat-sink-like study, invented for the tests: fin height, fin count (integer), alloy
/// (categorical) and air velocity, with fin height × fin count limited by a constraint; closed-form stand-ins for
/// the responses (resistance falls with height, count, velocity and copper; pressure drop rises with count and
/// velocity; mass rises with height, count and copper).</summary>
internal static class FinStudy
{
    public static FactorSpace Space { get; } = FactorSpace.Create([
        new FactorSpec("fin_height", Low: 20, High: 60),
        new FactorSpec("fin_count", FactorKind.Integer, 10, 40),
        new FactorSpec("alloy", FactorKind.Categorical, Levels: ["aluminium", "copper"]),
        new FactorSpec("air_velocity", Low: 1, High: 6),
    ]).Value!;

    public static DesignConstraints Constraints { get; } = DesignConstraints.Parse(["fin_height * fin_count <= 1500"], Space).Value!;

    public static double Resistance(double[] x) => 2.0 / (0.02 * x[0] + 0.03 * x[1] + (x[2] == 1 ? 0.4 : 0)) / Math.Sqrt(x[3]);

    public static double PressureDrop(double[] x) => 0.05 * x[1] * x[3] * x[3] + 0.1 * x[0];

    public static double Mass(double[] x) => x[0] * x[1] * (x[2] == 1 ? 3.3 : 1) * 0.1;
}
