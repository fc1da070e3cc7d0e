// Augmenting a design with runs that maximise the smallest distance to the runs already there (greedy maximin,
// Johnson, Moore & Ylvisaker 1990), over spread feasible candidates; the base of space-filling waves.
using Runfold.Shared.Studies;

namespace Runfold.Shared.Doe;

public sealed record AugmentOptions(int Seed = 1, int? Candidates = null)
{
    public static AugmentOptions Default { get; } = new();
}

public static class DesignAugmentation
{
    /// <summary>Adds <paramref name="count"/> runs to <paramref name="existing"/> (only the new runs are returned),
    /// each placed as far as possible from every run already there and from the other new runs, honouring the
    /// constraints. Integer and categorical factors take their own values.</summary>
    public static Outcome<DesignMatrix> Augment(DesignMatrix existing, int count, DesignConstraints? constraints = null, AugmentOptions? options = null)
    {
        ArgumentNullException.ThrowIfNull(existing);
        constraints ??= DesignConstraints.None;
        options ??= AugmentOptions.Default;
        if (count < 1)
            return Outcome<DesignMatrix>.Invalid(One("count", "Ask for at least one run to add."));
        var space = existing.Space;
        var wanted = options.Candidates ?? Math.Clamp(100 * count, 2_000, 20_000);
        var (candidates, drawn) = SpaceFilling.FeasibleCandidates(space, constraints, wanted, maxDraws: 20 * wanted, options.Seed);
        var distinct = candidates.Select(c => string.Join(",", c)).Distinct().Count();
        if (distinct < count)
            return Outcome<DesignMatrix>.Unprocessable(One("count",
                $"Only {distinct} distinct feasible settings were found among {drawn:N0} spread points; {count} new runs cannot be placed."));
        var old = DesignMetrics.ToRows(existing.Coded);
        var added = SpaceFilling.GreedyMaximin(candidates, old, count);
        return Outcome<DesignMatrix>.Ok(new DesignMatrix(space, SpaceFilling.ToMatrix(added, space.Count)));
    }

    private static ValidationErrors One(string field, string message)
    {
        var errors = new ValidationErrors();
        errors.Add(field, message);
        return errors;
    }
}
