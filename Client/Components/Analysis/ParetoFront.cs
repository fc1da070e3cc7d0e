using Runfold.Shared.Studies;

namespace Runfold.Client.Components.Analysis;

/// <summary>The non-dominated candidates for a chosen pair of responses (the Pareto set of that pair), drawn on the
/// Pareto scatter. Candidates carry their rank across all responses; this is the front for the two on screen.</summary>
public static class ParetoFront
{
    /// <summary>A response value as a cost to minimise under the response's goal: maximise flips the sign, a
    /// target counts the distance from it, a range the distance outside it; "none" expresses no preference.</summary>
    public static double Cost(ResponseSpec response, double value)
    {
        ArgumentNullException.ThrowIfNull(response);
        return response.Goal switch
        {
            ResponseGoal.Minimize => value,
            ResponseGoal.Maximize => -value,
            ResponseGoal.Target => Math.Abs(value - (response.Target ?? value)),
            ResponseGoal.Range => Math.Max(0, Math.Max((response.Lower ?? value) - value, value - (response.Upper ?? value))),
            _ => 0,
        };
    }

    /// <summary>Indices of the points no other point dominates (both costs at least as low, one lower), ordered by
    /// the first cost. O(n log n): sort by the first cost, keep each point that lowers the best second cost.</summary>
    public static IReadOnlyList<int> Indices(IReadOnlyList<(double First, double Second)> costs)
    {
        ArgumentNullException.ThrowIfNull(costs);
        var order = Enumerable.Range(0, costs.Count)
            .Where(i => double.IsFinite(costs[i].First) && double.IsFinite(costs[i].Second))
            .OrderBy(i => costs[i].First).ThenBy(i => costs[i].Second)
            .ToList();
        var front = new List<int>();
        var bestSecond = double.PositiveInfinity;
        foreach (var i in order)
        {
            if (costs[i].Second < bestSecond)
            {
                front.Add(i);
                bestSecond = costs[i].Second;
            }
        }
        return front;
    }
}
