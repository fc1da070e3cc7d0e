using Runfold.Shared.Studies;

namespace Runfold.Client.Components;

/// <summary>Which runs the run board lists: by state, wave and assignee, or only the signed-in person's.</summary>
public sealed record RunFilter(RunState? State = null, int? Wave = null, string? Assignee = null, bool Mine = false)
{
    public static RunFilter All { get; } = new();

    public bool IsEmpty => this == All;

    public IReadOnlyList<RunDto> Apply(IReadOnlyList<RunDto> runs, string? me)
    {
        ArgumentNullException.ThrowIfNull(runs);
        if (IsEmpty) return runs;
        return [.. runs.Where(r =>
            (State is null || r.State == State)
            && (Wave is null || r.Wave == Wave)
            && (Assignee is null || string.Equals(r.Assignee, Assignee, StringComparison.OrdinalIgnoreCase))
            && (!Mine || (me is not null && string.Equals(r.Assignee, me, StringComparison.OrdinalIgnoreCase))))];
    }
}
