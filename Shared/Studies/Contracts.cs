namespace Runfold.Shared.Studies;

// Request and answer shapes of the HTTP API (DESIGN.md §5). The UI's service interfaces use the same records.

/// <summary>A factor as the lead defines it. Continuous and integer factors have low and high; a categorical
/// factor has levels.</summary>
public sealed record FactorSpec(
    string Name,
    FactorKind Kind = FactorKind.Continuous,
    double? Low = null,
    double? High = null,
    IReadOnlyList<string>? Levels = null,
    FactorScale Scale = FactorScale.Linear,
    string? Unit = null);

/// <summary>A response (solver output). Lower and upper are hard limits for minimize, maximize, target and
/// none, and the acceptable band for range.</summary>
public sealed record ResponseSpec(
    string Name,
    ResponseGoal Goal = ResponseGoal.None,
    double? Target = null,
    double? Lower = null,
    double? Upper = null,
    double? Weight = null,
    string? Unit = null,
    bool Noisy = false);

/// <summary>Which design generates the runs, with the knobs each method reads (others ignore the rest).
/// <see cref="Model"/> is "linear", "interactions" or "quadratic"; <see cref="Maximin"/> (Latin hypercube,
/// default true) optimises the smallest distance between runs. Of the central composite variants only
/// circumscribed (the default) places runs outside the factor ranges, at ±α; inscribed and faceCentered stay
/// inside.</summary>
public sealed record DesignSpec(
    DesignMethod Method,
    int? Runs = null,
    IReadOnlyList<int>? Levels = null,
    int? CenterPoints = null,
    CentralCompositeVariant? Variant = null,
    int? Resolution = null,
    bool? Scramble = null,
    int? Seed = null,
    IReadOnlyList<string>? Constraints = null,
    string? Model = null,
    double? Alpha = null,
    bool? Maximin = null);

public sealed record CreateStudyRequest(
    string Name,
    IReadOnlyList<FactorSpec> Factors,
    IReadOnlyList<ResponseSpec> Responses,
    DesignSpec Design,
    string? Description = null);

public sealed record RunCounts(int Open, int Claimed, int Done, int Failed)
{
    public int Total => Open + Claimed + Done + Failed;

    public static RunCounts Empty { get; } = new(0, 0, 0, 0);
}

/// <summary>A study as the studies list shows it. <see cref="LastActivityAt"/> and <see cref="LastActivity"/> are the
/// newest event of its activity feed (time and what happened); <see cref="BestCandidate"/> comes from the newest
/// analysis snapshot and is absent until one holds a candidate.</summary>
public sealed record StudySummary(
    int Id,
    string Name,
    RunCounts Counts,
    DateTimeOffset CreatedAt,
    DateTimeOffset? LastActivityAt,
    string? LastActivity = null,
    BestCandidateSummary? BestCandidate = null);

/// <summary>The top-ranked candidate of a study's newest analysis snapshot, at a glance: its desirability and the
/// predicted value of each response. A prediction until a verification run confirms it.</summary>
public sealed record BestCandidateSummary(
    int SnapshotVersion,
    int BasedOnRuns,
    DateTimeOffset ComputedAt,
    double Desirability,
    bool Extrapolating,
    bool Verified,
    IReadOnlyList<PredictedResponseSummary> Predicted);

/// <summary>One response's predicted mean (and standard deviation, when the model gives one) in its unit.</summary>
public sealed record PredictedResponseSummary(string Response, string? Unit, double Mean, double? Sd);

public sealed record StudyMemberDto(Guid UserId, string UserName, string? DisplayName, StudyRole Role);

/// <summary>A study with its definition. <see cref="Runs"/> is filled only in the answer to its creation;
/// <see cref="YourRole"/> is the asking person's role on the study (the admin is lead everywhere).</summary>
public sealed record StudyDetail(
    int Id,
    string Name,
    string? Description,
    IReadOnlyList<FactorSpec> Factors,
    IReadOnlyList<ResponseSpec> Responses,
    DesignSpec Design,
    RunCounts Counts,
    IReadOnlyList<StudyMemberDto> Members,
    double LeaseHours,
    DateTimeOffset CreatedAt,
    IReadOnlyList<RunDto>? Runs = null,
    StudyRole? YourRole = null);

public sealed record RunResultDto(IReadOnlyDictionary<string, double> Values, int Revision, string? Note);

public sealed record RunDto(
    int Id,
    int Number,
    int Wave,
    RunState State,
    IReadOnlyDictionary<string, FactorValue> Factors,
    string? Assignee = null,
    DateTimeOffset? LeaseExpiresAt = null,
    RunResultDto? Result = null);
