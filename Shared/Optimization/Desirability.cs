// Desirability functions and the overall desirability as their weighted geometric mean (Derringer & Suich 1980,
// "Simultaneous optimization of several response variables", J. Quality Technology 12(4); NIST e-Handbook §5.5.3.2.2).
using Runfold.Shared.Studies;

namespace Runfold.Shared.Optimization;

/// <summary>
/// The desirability d(y) ∈ [0, 1] of one response. Maximize: 0 below <see cref="Low"/>, ((y − L)/(T − L))^s up to
/// <see cref="Target"/>, 1 above. Minimize: 1 below the target, ((U − y)/(U − T))^s up to <see cref="High"/>, 0
/// above. Target: ((y − L)/(T − L))^s below the target and ((U − y)/(U − T))^t above it, 0 outside [L, U]. Range: 1
/// inside [L, U], 0 outside. A hard limit outside these makes d = 0 beyond it as well.
/// </summary>
public sealed record DesirabilityFunction(
    ResponseGoal Goal,
    double Low,
    double Target,
    double High,
    double ShapeBelow = 1,
    double ShapeAbove = 1,
    double? LimitLow = null,
    double? LimitHigh = null)
{
    public double Evaluate(double y)
    {
        if (double.IsNaN(y)) return 0;
        if (LimitLow is { } floor && y < floor) return 0;
        if (LimitHigh is { } ceiling && y > ceiling) return 0;
        switch (Goal)
        {
            case ResponseGoal.Maximize:
                if (y >= Target) return 1;
                if (y <= Low) return 0;
                return Math.Pow((y - Low) / (Target - Low), ShapeBelow);
            case ResponseGoal.Minimize:
                if (y <= Target) return 1;
                if (y >= High) return 0;
                return Math.Pow((High - y) / (High - Target), ShapeBelow);
            case ResponseGoal.Target:
                if (y < Low || y > High) return 0;
                if (y == Target) return 1;
                return y < Target
                    ? Math.Pow((y - Low) / (Target - Low), ShapeBelow)
                    : Math.Pow((High - y) / (High - Target), ShapeAbove);
            case ResponseGoal.Range:
                return y >= Low && y <= High ? 1 : 0;
            default:
                return 1;
        }
    }

    /// <summary>How far y lies outside the region where d &gt; 0, in units of <paramref name="scale"/> (0 inside).
    /// Searches use it to walk towards desirable designs where every d is still 0.</summary>
    public double Shortfall(double y, double scale)
    {
        var below = Goal switch
        {
            ResponseGoal.Maximize or ResponseGoal.Target or ResponseGoal.Range => Low,
            _ => double.NegativeInfinity,
        };
        var above = Goal switch
        {
            ResponseGoal.Minimize or ResponseGoal.Target or ResponseGoal.Range => High,
            _ => double.PositiveInfinity,
        };
        if (LimitLow is { } floor) below = Math.Max(below, floor);
        if (LimitHigh is { } ceiling) above = Math.Min(above, ceiling);
        var miss = y < below ? below - y : y > above ? y - above : 0;
        return miss / scale;
    }
}

public static class Desirability
{
    /// <summary>The weighted geometric mean D = (Π dᵢ^wᵢ)^(1/Σwᵢ); 0 when any dᵢ is 0 (Derringer &amp; Suich 1980).</summary>
    public static double Overall(ReadOnlySpan<double> desirabilities, ReadOnlySpan<double> weights)
    {
        if (desirabilities.Length != weights.Length)
            throw new ArgumentException("Each desirability needs its weight.", nameof(weights));
        if (desirabilities.Length == 0) return 1;
        double logSum = 0, weightSum = 0;
        for (var i = 0; i < desirabilities.Length; i++)
        {
            if (!(desirabilities[i] > 0)) return 0;
            logSum += weights[i] * Math.Log(desirabilities[i]);
            weightSum += weights[i];
        }
        return Math.Exp(logSum / weightSum);
    }
}
