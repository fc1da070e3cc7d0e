using Runfold.Shared.Studies;

namespace Runfold.Server.Data.Entities;

/// <summary>A group of runs added together.</summary>
public sealed class Wave
{
    public int Id { get; set; }

    public int StudyId { get; set; }

    /// <summary>1 for the initial design, then 2, 3, … per study.</summary>
    public int Number { get; set; }

    public WaveKind Kind { get; set; }

    /// <summary>The request that produced the wave, as JSON.</summary>
    public string? RequestJson { get; set; }

    public DateTimeOffset CreatedAt { get; set; }

    public Guid? CreatedById { get; set; }
}

/// <summary>
/// One solver job. State changes are conditional updates on (state, version) — never read-modify-write —
/// so two callers can never hold one run.
/// </summary>
public sealed class Run
{
    public int Id { get; set; }

    public int StudyId { get; set; }

    public int WaveId { get; set; }

    public Wave? Wave { get; set; }

    /// <summary>1…N within the study, across waves.</summary>
    public int Number { get; set; }

    public RunState State { get; set; }

    /// <summary>Factor values in natural units, in factor order (categorical factors as level index).</summary>
    public double[] FactorValues { get; set; } = [];

    public Guid? AssigneeId { get; set; }

    public RunfoldUser? Assignee { get; set; }

    public DateTimeOffset? ClaimedAt { get; set; }

    public DateTimeOffset? LeaseExpiresAt { get; set; }

    /// <summary>The lease length of the current claim; a heartbeat extends the lease by this much.</summary>
    public double? LeaseHours { get; set; }

    /// <summary>The revision number of the current result (0: none, also after a failed run is reopened).</summary>
    public int CurrentRevision { get; set; }

    /// <summary>How many revisions the run has; the next upload becomes revision <c>RevisionCount + 1</c>.</summary>
    public int RevisionCount { get; set; }

    /// <summary>Concurrency token: every state change checks and bumps it.</summary>
    public int Version { get; set; }

    public DateTimeOffset UpdatedAt { get; set; }
}

/// <summary>An uploaded result. Append-only: a correction is a new revision; the newest is current.</summary>
public sealed class ResultRevision
{
    public long Id { get; set; }

    public int RunId { get; set; }

    public int Revision { get; set; }

    /// <summary>Done or failed.</summary>
    public RunState State { get; set; }

    /// <summary>Response name → value (empty for a failed run).</summary>
    public Dictionary<string, double> Values { get; set; } = [];

    public string? Note { get; set; }

    public double? SolverSeconds { get; set; }

    public Guid AuthorId { get; set; }

    /// <summary>The API token the upload came through; null when it came from the UI.</summary>
    public int? ApiTokenId { get; set; }

    public DateTimeOffset CreatedAt { get; set; }

    /// <summary>The client's Idempotency-Key: a retry with the same key returns this revision.</summary>
    public string? IdempotencyKey { get; set; }

    /// <summary>SHA-256 of the request the key was first used with, so a key reused for a different result is
    /// refused instead of silently answered with the old revision.</summary>
    public string? RequestHash { get; set; }
}

/// <summary>Who changed what, when, and from where (UI, an API token, or the system).</summary>
public sealed class AuditEvent
{
    public long Id { get; set; }

    public int? StudyId { get; set; }

    public int? RunId { get; set; }

    public Guid? ActorId { get; set; }

    public int? ApiTokenId { get; set; }

    /// <summary>"ui", "api" or "system".</summary>
    public required string Source { get; set; }

    /// <summary>A short machine name, e.g. "study.created", "run.claimed", "lease.lapsed".</summary>
    public required string Kind { get; set; }

    /// <summary>One sentence for the activity feed.</summary>
    public required string Detail { get; set; }

    public DateTimeOffset At { get; set; }
}

/// <summary>An immutable analysis result, tagged with the result-set version it was built from.</summary>
public sealed class AnalysisSnapshot
{
    public long Id { get; set; }

    public int StudyId { get; set; }

    /// <summary>1, 2, 3, … per study.</summary>
    public int Version { get; set; }

    public long ResultSetVersion { get; set; }

    public int BasedOnRuns { get; set; }

    public DateTimeOffset ComputedAt { get; set; }

    /// <summary>The snapshot as the API returns it, JSON.</summary>
    public required string PayloadJson { get; set; }

    /// <summary>What any server instance needs to rebuild the snapshot's models exactly: each response's model
    /// recipe and the result revisions it was fitted to, JSON (see Server/Analysis). Null when no response has a
    /// model.</summary>
    public string? ModelsJson { get; set; }

    /// <summary>The snapshot's point of the convergence view (an <c>AnalysisHistoryPointDto</c>), JSON, so the
    /// history is read without parsing every payload.</summary>
    public string? SummaryJson { get; set; }
}
