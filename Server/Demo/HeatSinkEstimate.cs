// Plate-fin heat sink in ducted forced air: Teertstra, Yovanovich, Culham & Lemczyk (1999) channel Nusselt number,
// Culham & Muzychka (2001) pressure drop with Shah & London (1978) f·Re, fin efficiency tanh(mH)/(mH) (Incropera).
namespace Runfold.Server.Demo;

/// <summary>One heat-sink geometry and its air supply, in SI units (m, m/s).</summary>
public sealed record HeatSinkDesign(double FinHeight, double FinThickness, int FinCount, double BaseThickness, double AirVelocity);

/// <summary>Thermo-physical properties of the cooling air.</summary>
public sealed record AirProperties(double Density, double SpecificHeat, double Viscosity, double Conductivity)
{
    /// <summary>Dry air at 300 K and 1 atm: Incropera et al., Fundamentals of Heat and Mass Transfer, Table A.4
    /// (values from memory: ρ 1.1614 kg/m³, cp 1007 J/kg·K, μ 184.6·10⁻⁷ N·s/m², k 26.3·10⁻³ W/m·K).</summary>
    public static AirProperties At300K { get; } = new(1.1614, 1007, 184.6e-7, 0.0263);

    public double KinematicViscosity => Viscosity / Density;

    public double Prandtl => Viscosity * SpecificHeat / Conductivity;
}

/// <summary>What stays fixed in the demo: the base footprint, the module that heats it, the material and the air.</summary>
public sealed record HeatSinkEnvelope
{
    /// <summary>Base width across the flow (m); the fins stand on it side by side.</summary>
    public double BaseWidth { get; init; } = 0.150;

    /// <summary>Base and fin length along the flow (m).</summary>
    public double BaseLength { get; init; } = 0.150;

    /// <summary>Footprint of the power module on the base (m): a 62 mm × 108 mm module, common practice for
    /// half-bridge IGBT modules.</summary>
    public double SourceWidth { get; init; } = 0.062;

    public double SourceLength { get; init; } = 0.108;

    /// <summary>Extruded aluminium (6063 class): k ≈ 200 W/m·K, ρ ≈ 2700 kg/m³ (common practice).</summary>
    public double MetalConductivity { get; init; } = 200;

    public double MetalDensity { get; init; } = 2700;

    public AirProperties Air { get; init; } = AirProperties.At300K;

    public static HeatSinkEnvelope Demo { get; } = new();
}

/// <summary>The three responses of the demo study and the intermediate numbers an engineer checks them by.</summary>
public sealed record HeatSinkPerformance(
    double ThermalResistance,
    double PressureDrop,
    double Mass,
    double FinSpacing,
    double ChannelVelocity,
    double ChannelReynolds,
    double ModifiedReynolds,
    double Nusselt,
    double HeatTransferCoefficient,
    double FinEfficiency,
    double ConvectiveResistance,
    double SpreadingResistance)
{
    /// <summary>Laminar channel flow, where the correlations apply (Re_Dh below about 2300, common practice).</summary>
    public bool WithinLaminarRange => ChannelReynolds < 2300;
}

/// <summary>
/// The demo's "solver": a closed-form engineering estimate of a shrouded plate-fin heat sink (air passes only
/// between the fins, tips touch the shroud). Thermal resistance = spreading and conduction in the base
/// (Lee et al. 1995) + convection from base and fins (Teertstra et al. 1999, fin efficiency of straight fins with
/// adiabatic tips); pressure drop = (K_c + 4 f_app L/D_h + K_e) × the channel's dynamic pressure, the core
/// pressure-drop form of Kays &amp; London with the developing-flow friction and loss coefficients of Culham &amp;
/// Muzychka (2001); mass = aluminium volume × density. Laminar correlations: outside
/// <see cref="HeatSinkPerformance.WithinLaminarRange"/> the estimate is an extrapolation.
/// </summary>
public static class HeatSinkEstimate
{
    public static HeatSinkPerformance Evaluate(HeatSinkDesign design, HeatSinkEnvelope? envelope = null)
    {
        ArgumentNullException.ThrowIfNull(design);
        var e = envelope ?? HeatSinkEnvelope.Demo;
        var air = e.Air;
        var (height, thickness, count, velocity) = (design.FinHeight, design.FinThickness, design.FinCount, design.AirVelocity);
        if (height <= 0 || thickness <= 0 || design.BaseThickness <= 0 || velocity <= 0)
            throw new ArgumentOutOfRangeException(nameof(design), "Fin height, fin thickness, base thickness and air velocity must be positive.");
        if (count < 2) throw new ArgumentOutOfRangeException(nameof(design), "A plate-fin heat sink needs at least two fins.");
        if (count * thickness >= e.BaseWidth)
            throw new ArgumentOutOfRangeException(nameof(design),
                $"{count} fins of {thickness * 1000:0.##} mm do not fit on a {e.BaseWidth * 1000:0.#} mm wide base.");

        // Channels between the fins: all approach air passes through them (shrouded, no bypass).
        var spacing = (e.BaseWidth - count * thickness) / (count - 1);
        var channelVelocity = velocity * e.BaseWidth / ((count - 1) * spacing);

        // Convection: Teertstra et al., Nusselt number on the fin spacing, referred to the inlet air temperature.
        var reynoldsSpacing = channelVelocity * spacing / air.KinematicViscosity;
        var modifiedReynolds = reynoldsSpacing * spacing / e.BaseLength;
        var nusselt = TeertstraNusselt(modifiedReynolds, air.Prandtl);
        var h = nusselt * air.Conductivity / spacing;
        var finEfficiency = FinEfficiency(FinParameter(h, e.MetalConductivity, thickness) * height);
        var finArea = 2 * height * e.BaseLength;                  // both faces of one fin
        var baseArea = (count - 1) * spacing * e.BaseLength;       // exposed base between the fins
        var convective = FinnedSurfaceResistance(h, baseArea, count * finArea, finEfficiency);
        var spreading = SpreadingResistance(e.SourceWidth * e.SourceLength, e.BaseWidth * e.BaseLength,
            design.BaseThickness, e.MetalConductivity, convective);

        // Pressure drop: rectangular channel of spacing × fin height.
        var hydraulicDiameter = 2 * spacing * height / (spacing + height);
        var reynolds = channelVelocity * hydraulicDiameter / air.KinematicViscosity;
        var aspect = Math.Min(spacing, height) / Math.Max(spacing, height);
        var lengthPlus = e.BaseLength / (hydraulicDiameter * reynolds);
        var fanning = ApparentFrictionFactorReynolds(lengthPlus, RectangularDuctFrictionFactorReynolds(aspect)) / reynolds;
        var openArea = 1 - count * thickness / e.BaseWidth;
        var (contraction, expansion) = EntranceExitLosses(openArea);
        var pressureDrop = (contraction + 4 * fanning * e.BaseLength / hydraulicDiameter + expansion)
                           * air.Density * channelVelocity * channelVelocity / 2;

        var volume = e.BaseWidth * e.BaseLength * design.BaseThickness + count * thickness * height * e.BaseLength;
        return new HeatSinkPerformance(
            spreading + convective, pressureDrop, volume * e.MetalDensity * 1000,
            spacing, channelVelocity, reynolds, modifiedReynolds, nusselt, h, finEfficiency, convective, spreading);
    }

    /// <summary>m = √(2h / (k t)) of a thin straight fin of thickness t (Incropera et al., §3.6; the fin's width
    /// along the flow is much larger than its thickness).</summary>
    public static double FinParameter(double heatTransferCoefficient, double conductivity, double thickness) =>
        Math.Sqrt(2 * heatTransferCoefficient / (conductivity * thickness));

    /// <summary>Efficiency of a straight fin of uniform section with an adiabatic tip, η = tanh(mL)/(mL)
    /// (Incropera et al., Fundamentals of Heat and Mass Transfer, Table 3.4 case B and eq. 3.89).</summary>
    public static double FinEfficiency(double mL)
    {
        ArgumentOutOfRangeException.ThrowIfNegative(mL);
        return mL < 1e-8 ? 1 : Math.Tanh(mL) / mL;
    }

    /// <summary>Resistance of a finned surface at the base temperature, R = 1 / (h (A_unfinned + η A_fins))
    /// (Incropera et al., §3.6.5, overall surface efficiency).</summary>
    public static double FinnedSurfaceResistance(double heatTransferCoefficient, double unfinnedArea, double finArea, double finEfficiency) =>
        1 / (heatTransferCoefficient * (unfinnedArea + finEfficiency * finArea));

    /// <summary>
    /// Average Nusselt number Nu_b = h b / k of a plate-fin channel, referred to the inlet air temperature, as the
    /// composite of fully developed and developing laminar flow between isothermal parallel plates
    /// (Teertstra, Yovanovich, Culham &amp; Lemczyk, Analytical forced convection modeling of plate fin heat sinks,
    /// IEEE SEMI-THERM 1999; used in Culham &amp; Muzychka 2001):
    /// Nu_b = [(Re_b* Pr / 2)⁻³ + (0.664 √Re_b* Pr^⅓ √(1 + 3.65/√Re_b*))⁻³]^(−⅓), with Re_b* = Re_b · b/L.
    /// </summary>
    public static double TeertstraNusselt(double modifiedReynolds, double prandtl)
    {
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(modifiedReynolds);
        var fullyDeveloped = modifiedReynolds * prandtl / 2;
        var developing = 0.664 * Math.Sqrt(modifiedReynolds) * Math.Cbrt(prandtl) * Math.Sqrt(1 + 3.65 / Math.Sqrt(modifiedReynolds));
        return Math.Pow(Math.Pow(fullyDeveloped, -3) + Math.Pow(developing, -3), -1.0 / 3);
    }

    /// <summary>Fanning f·Re of fully developed laminar flow in a rectangular duct of aspect ratio α = short/long
    /// side: Shah &amp; London, Laminar Flow Forced Convection in Ducts (1978), the fifth-order fit
    /// f·Re = 24(1 − 1.3553α + 1.9467α² − 1.7012α³ + 0.9564α⁴ − 0.2537α⁵), here multiplied out.</summary>
    public static double RectangularDuctFrictionFactorReynolds(double aspectRatio)
    {
        if (aspectRatio is < 0 or > 1) throw new ArgumentOutOfRangeException(nameof(aspectRatio), "The aspect ratio is the short side over the long side, 0…1.");
        var a = aspectRatio;
        return 24 - 32.527 * a + 46.721 * a * a - 40.829 * a * a * a + 22.954 * a * a * a * a - 6.089 * a * a * a * a * a;
    }

    /// <summary>Apparent (developing-flow) Fanning f·Re over a duct of dimensionless length L⁺ = L/(D_h Re):
    /// the composite [(3.44/√L⁺)² + (f·Re)²]^½ of Muzychka &amp; Yovanovich, as used by Culham &amp; Muzychka (2001);
    /// 3.44/√L⁺ is Shah's short-duct limit (from memory).</summary>
    public static double ApparentFrictionFactorReynolds(double lengthPlus, double fullyDevelopedFRe)
    {
        ArgumentOutOfRangeException.ThrowIfNegativeOrZero(lengthPlus);
        var developing = 3.44 / Math.Sqrt(lengthPlus);
        return Math.Sqrt(developing * developing + fullyDevelopedFRe * fullyDevelopedFRe);
    }

    /// <summary>Entrance contraction and exit expansion loss coefficients for a fin array of open-area ratio σ:
    /// K_c = 0.42 (1 − σ²), K_e = (1 − σ²)², the simplified Kays &amp; London forms used by Culham &amp; Muzychka
    /// (2001) (from memory).</summary>
    public static (double Contraction, double Expansion) EntranceExitLosses(double openAreaRatio)
    {
        var blocked = 1 - openAreaRatio * openAreaRatio;
        return (0.42 * blocked, blocked * blocked);
    }

    /// <summary>
    /// Spreading plus one-dimensional conduction resistance of a base plate heated over part of its area and
    /// cooled through the sink resistance <paramref name="sinkResistance"/> on the other face: the closed form of
    /// Lee, Song, Au &amp; Moran, Constriction/spreading resistance model for electronics packaging, ASME/JSME
    /// Thermal Engineering Conference 1995, with equivalent circular radii (average source temperature; from
    /// memory): ψ = ετ/√π + ½(1 − ε)^{3/2} Φ, Φ = (tanh λτ + λ/Bi)/(1 + (λ/Bi) tanh λτ), λ = π + 1/(ε√π),
    /// R = ψ/(√π k a). When the source covers the whole plate (ε = 1) this is the conduction t/(k A).
    /// </summary>
    public static double SpreadingResistance(double sourceArea, double plateArea, double thickness, double conductivity, double sinkResistance)
    {
        if (sourceArea <= 0 || sourceArea > plateArea) throw new ArgumentOutOfRangeException(nameof(sourceArea), "The source must be smaller than the plate.");
        var a = Math.Sqrt(sourceArea / Math.PI);
        var b = Math.Sqrt(plateArea / Math.PI);
        var epsilon = a / b;
        var tau = thickness / b;
        var biot = 1 / (Math.PI * conductivity * b * sinkResistance);
        var lambda = Math.PI + 1 / (epsilon * Math.Sqrt(Math.PI));
        var t = Math.Tanh(lambda * tau);
        var phi = (t + lambda / biot) / (1 + lambda / biot * t);
        var psi = epsilon * tau / Math.Sqrt(Math.PI) + 0.5 * Math.Pow(1 - epsilon, 1.5) * phi;
        return psi / (Math.Sqrt(Math.PI) * conductivity * a);
    }
}
