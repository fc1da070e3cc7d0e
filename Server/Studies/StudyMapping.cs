using Runfold.Server.Data.Entities;
using Runfold.Shared.Studies;

namespace Runfold.Server.Studies;

/// <summary>Entities ⇄ the API's records.</summary>
public static class StudyMapping
{
    public static FactorSpec ToSpec(this StudyFactor f) =>
        new(f.Name, f.Kind, f.Low, f.High, f.Kind == FactorKind.Categorical ? f.Levels : null, f.Scale, f.Unit);

    public static ResponseSpec ToSpec(this StudyResponse r) =>
        new(r.Name, r.Goal, r.Target, r.Lower, r.Upper, r.Weight, r.Unit, r.Noisy);

    /// <summary>The stored factors as a factor space (they were validated when the study was created).</summary>
    public static FactorSpace ToFactorSpace(this IEnumerable<StudyFactor> factors)
    {
        var space = FactorSpace.Create([.. factors.OrderBy(f => f.Position).Select(ToSpec)]);
        return space.Value ?? throw new InvalidOperationException("A stored study has invalid factors: " + space.Errors);
    }

    public static StudyFactor ToEntity(this Factor f) => new()
    {
        Position = f.Position,
        Name = f.Name,
        Kind = f.Kind,
        Low = f.IsCategorical ? null : f.Low,
        High = f.IsCategorical ? null : f.High,
        Levels = [.. f.Levels],
        Scale = f.Scale,
        Unit = f.Unit,
    };

    public static StudyResponse ToEntity(this Response r) => new()
    {
        Position = r.Position,
        Name = r.Name,
        Goal = r.Goal,
        Target = r.Target,
        Lower = r.Lower,
        Upper = r.Upper,
        Weight = r.Weight,
        Unit = r.Unit,
        Noisy = r.Noisy,
    };

    public static RunCounts ToCounts(this IEnumerable<(RunState State, int Count)> counts)
    {
        int open = 0, claimed = 0, done = 0, failed = 0;
        foreach (var (state, count) in counts)
        {
            switch (state)
            {
                case RunState.Open: open += count; break;
                case RunState.Claimed: claimed += count; break;
                case RunState.Done: done += count; break;
                case RunState.Failed: failed += count; break;
            }
        }
        return new RunCounts(open, claimed, done, failed);
    }
}
