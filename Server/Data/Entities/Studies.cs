using Runfold.Shared.Studies;

namespace Runfold.Server.Data.Entities;

public sealed class Study
{
    public int Id { get; set; }

    public required string Name { get; set; }

    public string? Description { get; set; }

    public DateTimeOffset CreatedAt { get; set; }

    public Guid CreatedById { get; set; }

    /// <summary>How long a claim lasts without a heartbeat.</summary>
    public double LeaseHours { get; set; } = 24;

    /// <summary>The design request of the initial wave, as JSON (DESIGN.md §5 <c>Design</c>).</summary>
    public required string DesignJson { get; set; }

    /// <summary>Bumped in the same transaction as every result or run-state change that the analysis reads;
    /// analysis snapshots are tagged with it.</summary>
    public long ResultSetVersion { get; set; }

    public DateTimeOffset? LastActivityAt { get; set; }

    public List<StudyFactor> Factors { get; set; } = [];

    public List<StudyResponse> Responses { get; set; } = [];

    public List<Wave> Waves { get; set; } = [];

    public List<StudyMember> Members { get; set; } = [];
}

public sealed class StudyFactor
{
    public int Id { get; set; }

    public int StudyId { get; set; }

    public int Position { get; set; }

    public required string Name { get; set; }

    public FactorKind Kind { get; set; }

    public double? Low { get; set; }

    public double? High { get; set; }

    public List<string> Levels { get; set; } = [];

    public FactorScale Scale { get; set; }

    public string? Unit { get; set; }
}

public sealed class StudyResponse
{
    public int Id { get; set; }

    public int StudyId { get; set; }

    public int Position { get; set; }

    public required string Name { get; set; }

    public ResponseGoal Goal { get; set; }

    public double? Target { get; set; }

    public double? Lower { get; set; }

    public double? Upper { get; set; }

    public double Weight { get; set; } = 1;

    public string? Unit { get; set; }

    /// <summary>The solver's output scatters for the same inputs (the surrogate then estimates a noise term).</summary>
    public bool Noisy { get; set; }
}

public sealed class StudyMember
{
    public int StudyId { get; set; }

    public Guid UserId { get; set; }

    public RunfoldUser? User { get; set; }

    public StudyRole Role { get; set; }

    public DateTimeOffset AddedAt { get; set; }
}
