using Runfold.Shared.Studies;

namespace Runfold.Server.Demo;

/// <summary>
/// The demo scenario of DESIGN.md §7 (invented for the demo only): a forced-air plate-fin heat sink for a
/// power-electronics module. Its runs are "solved" by <see cref="HeatSinkEstimate"/>.
/// </summary>
public static class DemoStudy
{
    public const string Name = "Plate-fin heat sink for the inverter module";

    public static CreateStudyRequest Request() => new(
        Name,
        Factors:
        [
            new FactorSpec("fin_height", FactorKind.Continuous, 20, 60, Unit: "mm"),
            new FactorSpec("fin_thickness", FactorKind.Continuous, 0.8, 2.5, Unit: "mm"),
            new FactorSpec("fin_count", FactorKind.Integer, 10, 40),
            new FactorSpec("base_thickness", FactorKind.Continuous, 3, 10, Unit: "mm"),
            new FactorSpec("air_velocity", FactorKind.Continuous, 1, 6, Unit: "m/s"),
        ],
        Responses:
        [
            new ResponseSpec("thermal_resistance", ResponseGoal.Minimize, Unit: "K/W"),
            new ResponseSpec("pressure_drop", ResponseGoal.Minimize, Upper: 60, Unit: "Pa", Weight: 0.5),
            new ResponseSpec("mass", ResponseGoal.Minimize, Unit: "g", Weight: 0.5),
        ],
        // A first wave of 8 runs per factor spread by a maximin Latin hypercube (5–10 per factor is common practice).
        Design: new DesignSpec(DesignMethod.LatinHypercube, Runs: 40, Seed: 2026, Maximin: true),
        Description: "Demo study (invented data). Which fin geometry keeps the module's base below its temperature limit " +
                     "at the lowest mass, without exceeding the fan's 60 Pa budget? Each run is one conjugate heat-transfer case.");

    /// <summary>The heat-sink geometry of one run, from the study's factor values (mm, count, m/s).</summary>
    public static HeatSinkDesign Design(IReadOnlyDictionary<string, FactorValue> factors)
    {
        ArgumentNullException.ThrowIfNull(factors);
        double Value(string name) => factors.TryGetValue(name, out var v) && !v.IsLevel
            ? v.Number
            : throw new ArgumentException($"The run has no numeric value for the factor '{name}'.", nameof(factors));
        return new HeatSinkDesign(
            FinHeight: Value("fin_height") / 1000,
            FinThickness: Value("fin_thickness") / 1000,
            FinCount: (int)Math.Round(Value("fin_count")),
            BaseThickness: Value("base_thickness") / 1000,
            AirVelocity: Value("air_velocity"));
    }

    /// <summary>The run's responses by name, in the study's units (K/W, Pa, g), rounded as a solver report would be.</summary>
    public static Dictionary<string, double> Results(HeatSinkPerformance performance)
    {
        ArgumentNullException.ThrowIfNull(performance);
        return new Dictionary<string, double>
        {
            ["thermal_resistance"] = Math.Round(performance.ThermalResistance, 5),
            ["pressure_drop"] = Math.Round(performance.PressureDrop, 3),
            ["mass"] = Math.Round(performance.Mass, 2),
        };
    }

    /// <summary>The note an analyst would attach: where the estimate leaves the laminar range of its correlations.</summary>
    public static string? Note(HeatSinkPerformance performance)
    {
        ArgumentNullException.ThrowIfNull(performance);
        return performance.WithinLaminarRange
            ? null
            : FormattableString.Invariant($"Channel Reynolds number {performance.ChannelReynolds:0} is above the laminar range of the correlations; treat this run as an extrapolation.");
    }
}
