namespace Runfold.Shared.Studies;

// How a study's runs are moving (the run board's progress panels): per person, remaining runs over time, and an
// expected finish from the median run duration. The arithmetic is here, pure; the server reads the times.

/// <summary>Progress of a study's runs for the run board.</summary>
public interface IRunProgress
{
    Task<Outcome<RunProgressDto>> GetAsync(int studyId, CancellationToken cancellationToken = default);
}

/// <summary>Per-person counts, the burndown (runs still open or claimed over time) and the expected finish, as of
/// <see cref="At"/>.</summary>
public sealed record RunProgressDto(
    IReadOnlyList<AnalystProgressDto> Analysts,
    IReadOnlyList<BurndownPointDto> Burndown,
    FinishEstimateDto Finish,
    DateTimeOffset At);

/// <summary>The runs one person ran (done or failed; a run counts for whoever held it) and holds now.</summary>
public sealed record AnalystProgressDto(string UserName, string? DisplayName, int Done, int Claimed, int Failed)
{
    public int Total => Done + Claimed + Failed;
}

/// <summary>From this instant on, <see cref="Remaining"/> of the study's <see cref="Total"/> runs were open or claimed.</summary>
public sealed record BurndownPointDto(DateTimeOffset At, int Remaining, int Total);

/// <summary>When the remaining runs may be done: <see cref="People"/> working in parallel, each taking the median
/// run duration (claim to result, over <see cref="RunsTimed"/> runs) per run. Null when there is nothing left, no
/// one working, or no run timed yet.</summary>
public sealed record FinishEstimateDto(int Remaining, int People, double? MedianRunHours, int RunsTimed, DateTimeOffset? ExpectedFinish)
{
    /// <summary>How many runs each person still has to do one after another.</summary>
    public int Rounds => People == 0 ? 0 : (Remaining + People - 1) / People;
}

/// <summary>A change of one run that moves the burndown: a result that finishes it (done or failed), or a failed
/// run reopened for another try.</summary>
public readonly record struct RunFinishEvent(int RunId, DateTimeOffset At, bool Finishes);

public static class RunProgressMath
{
    /// <summary>At most this many burndown points go to a page; longer histories are thinned evenly.</summary>
    public const int MaxBurndownPoints = 1_500;

    /// <summary>Runs still open or claimed after each change: waves add runs, the first result of a run finishes it,
    /// corrections of a finished run change nothing, a reopened run counts again. Changes at one instant are one
    /// point; the series ends at <paramref name="now"/>.</summary>
    public static IReadOnlyList<BurndownPointDto> Burndown(IEnumerable<(DateTimeOffset At, int Runs)> waves,
        IEnumerable<RunFinishEvent> events, DateTimeOffset now, int maxPoints = MaxBurndownPoints)
    {
        ArgumentNullException.ThrowIfNull(waves);
        ArgumentNullException.ThrowIfNull(events);
        var changes = waves.Select(w => (w.At, Kind: 0, Run: 0, Runs: w.Runs))
            .Concat(events.Select(e => (e.At, Kind: e.Finishes ? 1 : 2, Run: e.RunId, Runs: 0)))
            .OrderBy(c => c.At).ThenBy(c => c.Kind)
            .ToList();
        var finished = new HashSet<int>();
        var points = new List<BurndownPointDto>();
        int total = 0, remaining = 0;
        foreach (var change in changes)
        {
            switch (change.Kind)
            {
                case 0: total += change.Runs; remaining += change.Runs; break;
                case 1 when finished.Add(change.Run): remaining--; break;
                case 2 when finished.Remove(change.Run): remaining++; break;
            }
            if (points.Count > 0 && points[^1].At == change.At) points[^1] = new BurndownPointDto(change.At, remaining, total);
            else points.Add(new BurndownPointDto(change.At, remaining, total));
        }
        if (points.Count > 0 && points[^1].At < now) points.Add(new BurndownPointDto(now, remaining, total));
        return Thin(points, maxPoints);
    }

    private static List<BurndownPointDto> Thin(List<BurndownPointDto> points, int maxPoints)
    {
        if (points.Count <= maxPoints || maxPoints < 2) return points;
        var step = (points.Count - 1) / (double)(maxPoints - 1);
        return [.. Enumerable.Range(0, maxPoints).Select(i => points[(int)Math.Round(i * step)])];
    }

    /// <summary>The median of the durations (the mean of the middle two for an even count); null when there are none.</summary>
    public static TimeSpan? Median(IReadOnlyCollection<TimeSpan> durations)
    {
        ArgumentNullException.ThrowIfNull(durations);
        if (durations.Count == 0) return null;
        var sorted = durations.Order().ToArray();
        var middle = sorted.Length / 2;
        return sorted.Length % 2 == 1 ? sorted[middle] : (sorted[middle - 1] + sorted[middle]) / 2;
    }

    /// <summary>Expected finish = now + ⌈remaining ÷ people⌉ × median run duration: each person works one run at a
    /// time at the median pace. A rough guide, said as such on the page.</summary>
    public static FinishEstimateDto Estimate(int remaining, int people, IReadOnlyCollection<TimeSpan> durations, DateTimeOffset now)
    {
        ArgumentNullException.ThrowIfNull(durations);
        var median = Median(durations);
        var estimate = new FinishEstimateDto(remaining, people, median?.TotalHours, durations.Count, null);
        if (remaining <= 0 || people <= 0 || median is null) return estimate;
        return estimate with { ExpectedFinish = now + median.Value * estimate.Rounds };
    }
}
