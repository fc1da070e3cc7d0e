using Runfold.Server.Demo;

namespace Runfold.Server.Tests.Demo;

/// <summary>The demo's heat-sink estimate, checked piece by piece against published values and worked solutions.</summary>
public sealed class HeatSinkEstimateTests
{
    [Fact]
    public void Fin_efficiency_and_finned_surface_match_a_published_worked_solution()
    {
        // Source: Y. A. Çengel & A. J. Ghajar, Heat and Mass Transfer: Fundamentals and Applications (6th ed.), ch. 3
        // "Steady Heat Conduction": the 15 W circuit board of Prob. 3-202 with 20 plate fins, 15 cm wide, in its copper
        // version as the chapter's solutions work it (the problem text of that version was not seen): h = 45 W/m²·K,
        // k = 386 W/m·K, fins 2 mm thick and 2 cm long (adiabatic tip); m = 10.80 1/m, η = 0.985; with 0.009 m²
        // unfinned and 0.126 m² finned area (tips included), 15 W into 37 °C air gives a base temperature of 39.5 °C.
        var m = HeatSinkEstimate.FinParameter(45, 386, 0.002);
        Assert.Equal(10.80, m, 2);
        var efficiency = HeatSinkEstimate.FinEfficiency(m * 0.02);
        Assert.Equal(0.985, efficiency, 3);
        var resistance = HeatSinkEstimate.FinnedSurfaceResistance(45, 0.009, 0.126, efficiency);
        Assert.Equal(39.5, 37 + 15 * resistance, 1);
    }

    [Theory]
    [InlineData(0.0, 1.0)]
    [InlineData(1.0, 0.761594)]   // tanh(1)/1
    [InlineData(20.0, 0.05)]      // long fin: η → 1/(mL), since tanh(mL) → 1 (Incropera et al., Table 3.4 case D)
    public void Fin_efficiency_has_the_textbook_limits(double mL, double expected) =>
        Assert.Equal(expected, HeatSinkEstimate.FinEfficiency(mL), 5);

    [Theory]
    // Source: Incropera et al., Fundamentals of Heat and Mass Transfer, Table 8.1, Darcy f·Re_Dh of fully developed
    // laminar flow in rectangular ducts of side ratio b/a (values from memory): ∞ → 96 (parallel plates), 8 → 82,
    // 4 → 73, 2 → 62, 1 → 57. The Shah & London fit gives the Fanning value, a quarter of Darcy's.
    [InlineData(0.0, 96)]
    [InlineData(0.125, 82)]
    [InlineData(0.25, 73)]
    [InlineData(0.5, 62)]
    [InlineData(1.0, 57)]
    public void Rectangular_duct_friction_matches_the_handbook_table(double aspectRatio, double darcyFRe)
    {
        var fanning = HeatSinkEstimate.RectangularDuctFrictionFactorReynolds(aspectRatio);
        Assert.InRange(4 * fanning / darcyFRe, 0.99, 1.01);
    }

    [Fact]
    public void Apparent_friction_tends_to_fully_developed_in_long_channels_and_to_the_entry_limit_in_short_ones()
    {
        // Long duct: the developing term vanishes, f_app·Re → f·Re = 24 between parallel plates (96/4, Incropera
        // Table 8.1). Short duct: f_app·Re → 3.44/√L⁺ (Shah 1978, from memory).
        Assert.InRange(HeatSinkEstimate.ApparentFrictionFactorReynolds(1e4, 24) / 24, 1, 1.0001);
        Assert.InRange(HeatSinkEstimate.ApparentFrictionFactorReynolds(1e-6, 24) / (3.44 / Math.Sqrt(1e-6)), 1, 1.0001);
    }

    [Theory]
    [InlineData(0.05)]
    [InlineData(0.2)]
    [InlineData(0.5)]
    public void Channel_Nusselt_number_meets_fully_developed_flow_between_isothermal_plates(double modifiedReynolds)
    {
        // Fully developed laminar flow between isothermal parallel plates has Nu_Dh = 7.54 on the mean temperature
        // (Incropera et al., Table 8.1; Shah & London 1978). With D_h = 2b and the outlet temperature from the
        // energy balance of Incropera eq. 8.41b, the Nusselt number on b and the inlet temperature is
        // (Re_b* Pr / 2)(1 − exp(−7.54 / (Re_b* Pr))). The composite must meet it in long channels.
        const double pr = 0.707;
        var reference = modifiedReynolds * pr / 2 * (1 - Math.Exp(-7.54 / (modifiedReynolds * pr)));
        Assert.InRange(HeatSinkEstimate.TeertstraNusselt(modifiedReynolds, pr) / reference, 0.99, 1.01);
    }

    [Fact]
    public void Channel_Nusselt_number_meets_the_laminar_flat_plate_in_short_channels()
    {
        // Short, wide channels behave like two flat plates: Nu_L = 0.664 Re_L^½ Pr^⅓ (Pohlhausen; Incropera et al.,
        // eq. 7.30). On the fin spacing b this reads Nu_b = 0.664 √Re_b* Pr^⅓; the composite's 3.65/√Re_b* term
        // adds 1.8 % at Re_b* = 10⁴.
        const double pr = 0.707;
        var flatPlate = 0.664 * Math.Sqrt(1e4) * Math.Cbrt(pr);
        Assert.InRange(HeatSinkEstimate.TeertstraNusselt(1e4, pr) / flatPlate, 1.0, 1.02);
    }

    [Fact]
    public void Spreading_resistance_reduces_to_plain_conduction_when_the_source_covers_the_plate()
    {
        // ε = 1: no spreading, only Fourier conduction through the plate, R = t / (k A).
        const double area = 0.15 * 0.15, thickness = 0.006, k = 200;
        var r = HeatSinkEstimate.SpreadingResistance(area, area, thickness, k, sinkResistance: 0.1);
        Assert.Equal(thickness / (k * area), r, 10);
    }

    [Fact]
    public void Spreading_resistance_falls_as_the_base_thickens_over_the_demo_range()
    {
        var thin = HeatSinkEstimate.SpreadingResistance(0.062 * 0.108, 0.15 * 0.15, 0.003, 200, 0.15);
        var thick = HeatSinkEstimate.SpreadingResistance(0.062 * 0.108, 0.15 * 0.15, 0.010, 200, 0.15);
        Assert.True(thick < thin, $"{thick} should be below {thin}");
        Assert.InRange(thin, 0.01, 0.2);
    }

    [Fact]
    public void Mass_is_the_aluminium_volume_times_its_density()
    {
        // Base 150 × 150 × 6 mm plus 20 fins of 1.5 × 40 × 150 mm: 3.15·10⁻⁴ m³ × 2700 kg/m³ = 850.5 g.
        var result = HeatSinkEstimate.Evaluate(new HeatSinkDesign(0.040, 0.0015, 20, 0.006, 3));
        Assert.Equal(850.5, result.Mass, 6);
    }

    [Fact]
    public void More_air_lowers_the_resistance_and_raises_the_pressure_drop()
    {
        var slow = HeatSinkEstimate.Evaluate(new HeatSinkDesign(0.040, 0.0015, 25, 0.006, 1.5));
        var fast = HeatSinkEstimate.Evaluate(new HeatSinkDesign(0.040, 0.0015, 25, 0.006, 4.5));
        Assert.True(fast.ThermalResistance < slow.ThermalResistance);
        Assert.True(fast.PressureDrop > 2 * slow.PressureDrop);
        Assert.Equal(slow.Mass, fast.Mass);
    }

    [Fact]
    public void Every_corner_of_the_demo_space_gives_finite_positive_responses()
    {
        foreach (var height in new[] { 0.020, 0.060 })
        foreach (var thickness in new[] { 0.0008, 0.0025 })
        foreach (var count in new[] { 10, 40 })
        foreach (var baseThickness in new[] { 0.003, 0.010 })
        foreach (var velocity in new[] { 1.0, 6.0 })
        {
            var r = HeatSinkEstimate.Evaluate(new HeatSinkDesign(height, thickness, count, baseThickness, velocity));
            Assert.InRange(r.ThermalResistance, 0.02, 2.0);
            Assert.InRange(r.PressureDrop, 0.1, 1000);
            Assert.InRange(r.Mass, 100, 5000);
            Assert.InRange(r.FinEfficiency, 0.5, 1.0);
        }
    }

    [Fact]
    public void Fins_that_do_not_fit_on_the_base_are_refused_with_a_sentence()
    {
        var e = Assert.Throws<ArgumentOutOfRangeException>(() => HeatSinkEstimate.Evaluate(new HeatSinkDesign(0.04, 0.004, 40, 0.005, 2)));
        Assert.Contains("do not fit", e.Message, StringComparison.Ordinal);
    }
}
