using Runfold.Shared.Studies;

namespace Runfold.Server.Demo;

/// <summary>
/// The demo scenario of DESIGN.md §7 (invented for the demo only): a forced-air plate-fin heat sink for a
/// power-electronics module.
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
        Design: new DesignSpec(DesignMethod.FullFactorial),
        Description: "Demo study (invented data). Which fin geometry keeps the module's base below its temperature limit " +
                     "at the lowest mass, without exceeding the fan's 60 Pa budget? Each run is one conjugate heat-transfer case.");
}
