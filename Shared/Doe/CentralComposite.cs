// Central composite design (Box & Wilson 1951): a two-level factorial core, 2k axial runs and centre runs;
// circumscribed, inscribed and face-centred variants as in the NIST/SEMATECH e-Handbook §5.3.3.6.1.
using System.Globalization;
using MathNet.Numerics.LinearAlgebra;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Doe;

public sealed record CentralCompositeLayout(
    CentralCompositeVariant Variant,
    FractionPlan Core,
    double Alpha,
    bool Rotatable,
    int CenterRuns)
{
    public int AxialRuns => 2 * Core.Factors;

    public int RunCount => Core.Runs + AxialRuns + CenterRuns;

    /// <summary>Circumscribed runs reach ±α beyond the ranges unless α ≤ 1; the other variants stay inside.</summary>
    public bool StaysInsideRanges => Variant != CentralCompositeVariant.Circumscribed || Alpha <= 1 + 1e-12;
}

public static class CentralComposite
{
    /// <summary>The layout for k factors: the factorial core is the smallest fraction of resolution V or more
    /// (so all main effects and two-factor interactions are estimable); α is the rotatable F^(1/4) for F
    /// factorial runs unless given; face-centred uses α = 1.</summary>
    public static CentralCompositeLayout Plan(int factors, CentralCompositeVariant variant, double? alpha, int centerRuns)
    {
        var core = FractionalFactorial.Smallest(factors, 5);
        var rotatable = Math.Pow(core.Runs, 0.25);
        var a = variant == CentralCompositeVariant.FaceCentered ? 1 : alpha ?? rotatable;
        return new CentralCompositeLayout(variant, core, a, Math.Abs(a - rotatable) < 1e-9, centerRuns);
    }

    /// <summary>Coded runs: factorial core, then axial pairs (−α, +α per factor in order), then centre runs.
    /// Inscribed designs divide everything by α so the axial runs sit at the range ends.</summary>
    public static Matrix<double> Generate(CentralCompositeLayout layout)
    {
        ArgumentNullException.ThrowIfNull(layout);
        var k = layout.Core.Factors;
        var coded = Matrix<double>.Build.Dense(layout.RunCount, k);
        var core = FractionalFactorial.Generate(layout.Core);
        var scale = layout.Variant == CentralCompositeVariant.Inscribed ? 1 / layout.Alpha : 1;
        var axial = layout.Variant == CentralCompositeVariant.Inscribed ? 1 : layout.Alpha;
        for (var i = 0; i < core.RowCount; i++)
            for (var j = 0; j < k; j++) coded[i, j] = core[i, j] * scale;
        var row = core.RowCount;
        for (var j = 0; j < k; j++)
        {
            coded[row++, j] = -axial;
            coded[row++, j] = axial;
        }
        return coded;
    }

    public static CompositeSummary Summarize(CentralCompositeLayout layout, FactorSpace space)
    {
        ArgumentNullException.ThrowIfNull(layout);
        ArgumentNullException.ThrowIfNull(space);
        var alpha = layout.Alpha.ToString("0.###", CultureInfo.InvariantCulture);
        string note;
        if (layout.StaysInsideRanges)
            note = layout.Variant switch
            {
                CentralCompositeVariant.Inscribed =>
                    $"Inscribed: every run stays inside the factor ranges; the axial runs sit at the range ends and the factorial runs at ±1/α = ±{(1 / layout.Alpha).ToString("0.###", CultureInfo.InvariantCulture)} (coded).",
                CentralCompositeVariant.FaceCentered =>
                    "Face-centred: every run stays inside the factor ranges; the axial runs sit at the middle of each face (α = 1), three levels per factor.",
                _ => $"Circumscribed with α = {alpha}: every run stays inside the factor ranges.",
            };
        else
        {
            var reach = string.Join("; ", space.Factors.Select(f =>
                string.Create(CultureInfo.InvariantCulture, $"{f.Name} {f.FromCoded(-layout.Alpha):G4} to {f.FromCoded(layout.Alpha):G4}{(f.Unit is null ? "" : " " + f.Unit)}")));
            note = $"Circumscribed: the axial runs lie OUTSIDE the factor ranges, at ±α = ±{alpha} (coded): {reach}. " +
                   "Choose inscribed or faceCentered to keep every run inside the ranges.";
        }
        return new CompositeSummary(layout.Variant, layout.Alpha, layout.Rotatable, layout.Core.Runs, layout.AxialRuns,
            layout.CenterRuns, layout.StaysInsideRanges, note);
    }
}
