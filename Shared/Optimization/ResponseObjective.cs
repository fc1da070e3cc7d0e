using MathNet.Numerics.Distributions;
using Runfold.Shared.Modeling;
using Runfold.Shared.Modeling.Selection;
using Runfold.Shared.Studies;

namespace Runfold.Shared.Optimization;

/// <summary>
/// One response as the searches see it: its goal, limits and weight (<see cref="Response"/>), its surrogate, the
/// surrogate's cross-validated RMSE, and optionally the observed values of the done runs (in the order of the coded
/// runs given to the search) for the incumbent of expected improvement. <see cref="ShapeBelow"/> and
/// <see cref="ShapeAbove"/> are the Derringer–Suich exponents s and t (1: linear).
/// </summary>
public sealed record ResponseObjective(Response Response, IResponseSurrogate Surrogate, double CvRmse, IReadOnlyList<double>? Observed = null)
{
    public double ShapeBelow { get; init; } = 1;

    public double ShapeAbove { get; init; } = 1;

    public string Name => Response.Name;

    public ResponseGoal Goal => Response.Goal;

    public bool HasGoal => Response.Goal != ResponseGoal.None;

    /// <summary>Lower and upper are hard limits for every goal but range, where they are the acceptable band.</summary>
    public bool HasHardLimit => Response.Goal != ResponseGoal.Range && (Response.Lower is not null || Response.Upper is not null);

    /// <summary>The objective of a selected surrogate: its cross-validated RMSE and observed values come along.</summary>
    public static ResponseObjective From(Response response, FittedSurrogate fitted)
    {
        ArgumentNullException.ThrowIfNull(fitted);
        return new(response, fitted, fitted.Check.CvRmse, fitted.Check.Observed);
    }

    /// <summary>
    /// The desirability function over the span of values the response takes (<paramref name="spanLow"/> …
    /// <paramref name="spanHigh"/>). Where the response gives no bound the span supplies it: a minimized response
    /// without a target is fully desirable only at the lowest value of the span and not at all at the highest (unless
    /// an upper limit is given), a maximized one the other way round; a target without limits falls to 0 at the ends of
    /// the span. Limits always cut d to 0 beyond them.
    /// </summary>
    public DesirabilityFunction Desirability(double spanLow, double spanHigh)
    {
        var r = Response;
        var (s, t) = (ShapeBelow, ShapeAbove);
        return r.Goal switch
        {
            ResponseGoal.Maximize => new(r.Goal, r.Lower ?? spanLow, r.Target ?? spanHigh, double.PositiveInfinity, s, t, r.Lower, r.Upper),
            ResponseGoal.Minimize => new(r.Goal, double.NegativeInfinity, r.Target ?? spanLow, r.Upper ?? spanHigh, s, t, r.Lower, r.Upper),
            ResponseGoal.Target => new(r.Goal, r.Lower ?? Math.Min(spanLow, r.Target!.Value), r.Target!.Value,
                r.Upper ?? Math.Max(spanHigh, r.Target!.Value), s, t, r.Lower, r.Upper),
            ResponseGoal.Range => new(r.Goal, r.Lower!.Value, r.Target ?? (r.Lower!.Value + r.Upper!.Value) / 2, r.Upper!.Value, s, t, r.Lower, r.Upper),
            _ => new(r.Goal, double.NegativeInfinity, 0, double.PositiveInfinity, s, t, r.Lower, r.Upper),
        };
    }

    /// <summary>
    /// The probability that the response lies within its limits (the band for range), from the predictive normal
    /// N(mean, sd²): Φ((U − μ)/σ) − Φ((L − μ)/σ). Without a standard deviation it is 1 or 0 by the mean. Null when the
    /// response has no limit.
    /// </summary>
    public double? LimitProbability(double mean, double? sd)
    {
        var (low, high) = (Response.Lower, Response.Upper);
        if (low is null && high is null) return null;
        if (sd is not { } s || !(s > 0))
            return (low is null || mean >= low) && (high is null || mean <= high) ? 1 : 0;
        var upperPart = high is { } u ? Normal.CDF(mean, s, u) : 1;
        var lowerPart = low is { } l ? Normal.CDF(mean, s, l) : 0;
        return Math.Clamp(upperPart - lowerPart, 0, 1);
    }
}
