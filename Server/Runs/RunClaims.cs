using System.Globalization;
using Microsoft.EntityFrameworkCore;
using Npgsql;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Server.Studies;
using Runfold.Server.Telemetry;
using Runfold.Shared.Studies;

namespace Runfold.Server.Runs;

/// <summary>
/// Claims, heartbeats, releases and assignments. Every change is a conditional update on the run's state (and
/// version), never read-modify-write: on PostgreSQL a claim is one <c>UPDATE … FROM (SELECT … FOR UPDATE SKIP
/// LOCKED)</c> statement, so several server instances on one database never hand one run to two callers; on
/// SQLite the claim runs in a write transaction (SQLite has one writer).
/// </summary>
public sealed class RunClaims(RunfoldDbContext db, TimeProvider time, IStudyChangeNotifier changes, RunQueries queries, FactorSpaces factorSpaces)
{
    public async Task<Outcome<IReadOnlyList<RunDto>>> ClaimAsync(Caller caller, int studyId, ClaimRequest? request, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        request ??= new ClaimRequest();
        var errors = new ValidationErrors();
        if (request.Count is < 1 or > ResultRules.MaxClaimCount)
            errors.Add("count", $"Claim between 1 and {ResultRules.MaxClaimCount} runs at a time.");
        if (ResultRules.CheckLeaseHours(request.LeaseHours) is { } leaseError) errors.Add("leaseHours", leaseError);
        if (!errors.IsEmpty) return Outcome<IReadOnlyList<RunDto>>.Invalid(errors);

        if (db.Provider == StorageProvider.Postgres) return await ClaimOnPostgresAsync(caller, studyId, request, cancellationToken);

        var study = await db.Studies.Where(s => s.Id == studyId)
            .Select(s => new
            {
                s.LeaseHours,
                s.ResultSetVersion,
                Role = db.StudyMembers.Where(m => m.StudyId == s.Id && m.UserId == caller.UserId).Select(m => (StudyRole?)m.Role).FirstOrDefault(),
            })
            .FirstOrDefaultAsync(cancellationToken);
        var role = caller.IsAdmin && study is not null ? StudyRole.Lead : study?.Role;
        if (Denied(role, studyId) is { } denied) return denied;

        var hours = request.LeaseHours ?? study!.LeaseHours;
        var now = time.GetUtcNow();
        var ids = await ClaimOnSqliteAsync(caller, studyId, request.Count, hours, now, cancellationToken);
        if (ids.Count > 0) changes.Publish(new StudyChange(studyId, StudyChangeKind.Claims, study!.ResultSetVersion)); // claims do not bump it
        RunfoldMetrics.RunsClaimed(ids.Count);
        return Outcome<IReadOnlyList<RunDto>>.Ok(await queries.ListByIdsAsync(studyId, ids, cancellationToken));
    }

    private static Outcome<IReadOnlyList<RunDto>>? Denied(StudyRole? role, int studyId) => role switch
    {
        null => Outcome<IReadOnlyList<RunDto>>.NotFound(StudyAccess.NotVisible(studyId)),
        < StudyRole.Analyst => Outcome<IReadOnlyList<RunDto>>.Forbidden(StudyAccess.Refusal(role.Value, StudyRole.Analyst, "claim runs")),
        _ => null,
    };

    /// <summary>
    /// One statement, one round trip: the caller's role and the study's lease length, then lock the
    /// lowest-numbered open runs no other transaction holds (runs locked by a concurrent claim are skipped, not
    /// waited for), claim them and write one audit event per run. It answers one row per claimed run, or one row
    /// without a run when the role does not allow it or no run is open, or no row when there is no such study.
    /// </summary>
    private async Task<Outcome<IReadOnlyList<RunDto>>> ClaimOnPostgresAsync(Caller caller, int studyId, ClaimRequest request, CancellationToken cancellationToken)
    {
        const string sql = """
            WITH access AS (
                SELECT s.id, s.lease_hours, s.result_set_version,
                       CASE WHEN @admin THEN 'lead'
                            ELSE (SELECT m.role FROM study_members m WHERE m.study_id = s.id AND m.user_id = @user) END AS role
                FROM studies s WHERE s.id = @study),
            lease AS (
                SELECT COALESCE(@hours, a.lease_hours) AS hours FROM access a WHERE a.role IN ('analyst', 'lead')),
            picked AS (
                SELECT r.id FROM runs r
                WHERE r.study_id = @study AND r.state = 'open' AND EXISTS (SELECT 1 FROM lease)
                ORDER BY r.number
                LIMIT @count
                FOR UPDATE OF r SKIP LOCKED),
            claimed AS (
                UPDATE runs r
                SET state = 'claimed', assignee_id = @user, claimed_at = @now,
                    lease_expires_at = @now + make_interval(secs => (SELECT hours FROM lease) * 3600),
                    lease_hours = (SELECT hours FROM lease), version = r.version + 1, updated_at = @now
                FROM picked
                WHERE r.id = picked.id AND r.state = 'open'
                RETURNING r.id, r.number, r.wave_id, r.factor_values, r.lease_expires_at),
            audited AS (
                INSERT INTO audit_events (study_id, run_id, actor_id, api_token_id, source, kind, detail, at)
                SELECT @study, c.id, @user, @token, @source, 'run.claimed',
                       @who || ' claimed run ' || c.number || ' (lease ' || trim_scale(round((SELECT hours FROM lease)::numeric, 2)) || ' h)', @now
                FROM claimed c)
            SELECT a.role, a.result_set_version, c.id, c.number, w.number, c.factor_values, c.lease_expires_at
            FROM access a
            LEFT JOIN claimed c ON true
            LEFT JOIN waves w ON w.id = c.wave_id
            ORDER BY c.number
            """;
        var now = time.GetUtcNow().ToUniversalTime();
        var connection = (NpgsqlConnection)db.Database.GetDbConnection();
        await db.Database.OpenConnectionAsync(cancellationToken);
        StudyRole? role = null;
        var found = false;
        long version = 0;
        var rows = new List<(int Id, int Number, int Wave, double[] Factors, DateTimeOffset Lease)>(request.Count);
        try
        {
            await using var command = new NpgsqlCommand(sql, connection);
            command.Parameters.AddWithValue("study", studyId);
            command.Parameters.AddWithValue("count", request.Count);
            command.Parameters.AddWithValue("user", caller.UserId);
            command.Parameters.AddWithValue("admin", caller.IsAdmin);
            command.Parameters.AddWithValue("now", now);
            command.Parameters.Add(new NpgsqlParameter("hours", NpgsqlTypes.NpgsqlDbType.Double) { Value = (object?)request.LeaseHours ?? DBNull.Value });
            command.Parameters.Add(new NpgsqlParameter("token", NpgsqlTypes.NpgsqlDbType.Integer) { Value = (object?)caller.ApiTokenId ?? DBNull.Value });
            command.Parameters.AddWithValue("source", caller.Source);
            command.Parameters.AddWithValue("who", caller.UserName);
            await using var reader = await command.ExecuteReaderAsync(cancellationToken);
            while (await reader.ReadAsync(cancellationToken))
            {
                found = true;
                role = reader.IsDBNull(0) ? null : Data.CamelCaseEnumConverter<StudyRole>.FromName(reader.GetString(0));
                version = reader.GetInt64(1);
                if (!reader.IsDBNull(2))
                    rows.Add((reader.GetInt32(2), reader.GetInt32(3), reader.GetInt32(4), reader.GetFieldValue<double[]>(5), reader.GetFieldValue<DateTimeOffset>(6)));
            }
        }
        finally
        {
            await db.Database.CloseConnectionAsync();
        }
        if (Denied(found ? role : null, studyId) is { } denied) return denied;
        if (rows.Count == 0) return Outcome<IReadOnlyList<RunDto>>.Ok([]);
        changes.Publish(new StudyChange(studyId, StudyChangeKind.Claims, version)); // claims do not bump it
        RunfoldMetrics.RunsClaimed(rows.Count);
        var space = await factorSpaces.GetAsync(db, studyId, cancellationToken);
        return Outcome<IReadOnlyList<RunDto>>.Ok([.. rows.Select(r =>
            new RunDto(r.Id, r.Number, r.Wave, RunState.Claimed, space.ToValues(r.Factors), caller.UserName, r.Lease))]);
    }

    /// <summary>SQLite's transactions take the write lock at BEGIN (BEGIN IMMEDIATE), so the pick and the
    /// conditional update cannot interleave with another claim.</summary>
    private async Task<List<int>> ClaimOnSqliteAsync(Caller caller, int studyId, int count, double hours,
        DateTimeOffset now, CancellationToken cancellationToken)
    {
        await using var transaction = await db.Database.BeginTransactionAsync(cancellationToken);
        var picked = await db.Runs.Where(r => r.StudyId == studyId && r.State == RunState.Open)
            .OrderBy(r => r.Number).Take(count).Select(r => new { r.Id, r.Number }).ToListAsync(cancellationToken);
        var ids = picked.Select(p => p.Id).ToList();
        var taken = await db.Runs.Where(r => ids.Contains(r.Id) && r.State == RunState.Open)
            .ClaimForAsync(caller.UserId, hours, now, cancellationToken);
        if (taken != ids.Count) throw new InvalidOperationException("A claim changed under the SQLite write lock.");
        db.AuditEvents.AddRange(picked.Select(p => Audit.Event(caller, studyId, p.Id, "run.claimed",
            $"{caller.UserName} claimed run {p.Number}{LeaseText(hours)}", now)));
        await db.SaveChangesAsync(cancellationToken);
        await transaction.CommitAsync(cancellationToken);
        db.ChangeTracker.Clear();
        return ids;
    }

    /// <summary>Extends the caller's lease by its length from now; 409 when the caller no longer holds the claim
    /// (released, lapsed, or done).</summary>
    public async Task<Outcome<HeartbeatAnswer>> HeartbeatAsync(Caller caller, int runId, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        for (var attempt = 0; attempt < 3; attempt++)
        {
            var run = await FindAsync(runId, cancellationToken);
            var role = run is null ? null : await db.RoleAsync(caller, run.StudyId, cancellationToken);
            if (run is null || role is null) return Outcome<HeartbeatAnswer>.NotFound(StudyAccess.RunNotVisible(runId));
            if (role < StudyRole.Analyst) return Outcome<HeartbeatAnswer>.Forbidden(StudyAccess.Refusal(role.Value, StudyRole.Analyst, "heartbeat runs"));
            var now = time.GetUtcNow();
            if (run.State != RunState.Claimed || run.AssigneeId != caller.UserId || run.LeaseExpiresAt <= now)
            {
                RunfoldMetrics.Heartbeat(extended: false);
                return Outcome<HeartbeatAnswer>.Conflict(NotHolding(run, caller));
            }
            var expires = now.AddHours(run.LeaseHours ?? 24);
            var updated = await db.Runs
                .Where(r => r.Id == runId && r.Version == run.Version && r.State == RunState.Claimed && r.AssigneeId == caller.UserId)
                .ExecuteUpdateAsync(s => s
                    .SetProperty(r => r.LeaseExpiresAt, expires)
                    .SetProperty(r => r.Version, r => r.Version + 1)
                    .SetProperty(r => r.UpdatedAt, now), cancellationToken);
            if (updated == 1)
            {
                changes.Publish(new StudyChange(run.StudyId, StudyChangeKind.Claims, await db.ResultSetVersionAsync(run.StudyId, cancellationToken)));
                RunfoldMetrics.Heartbeat(extended: true);
                return Outcome<HeartbeatAnswer>.Ok(new HeartbeatAnswer(expires));
            }
            // The run changed between reading and updating (a concurrent heartbeat, release or sweep): look again.
        }
        return Outcome<HeartbeatAnswer>.Conflict($"Run {runId} kept changing while the heartbeat was stored; send it again.");
    }

    /// <summary>Returns a claimed run to the open pool: the holder releases their own claim, the lead anyone's.</summary>
    public async Task<Outcome<RunDto>> ReleaseAsync(Caller caller, int runId, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var run = await FindAsync(runId, cancellationToken);
        var role = run is null ? null : await db.RoleAsync(caller, run.StudyId, cancellationToken);
        if (run is null || role is null) return Outcome<RunDto>.NotFound(StudyAccess.RunNotVisible(runId));
        if (role < StudyRole.Analyst) return Outcome<RunDto>.Forbidden(StudyAccess.Refusal(role.Value, StudyRole.Analyst, "release runs"));
        if (run.State != RunState.Claimed)
            return Outcome<RunDto>.Conflict($"Run {run.Number} is {StateName(run.State)}, not claimed; there is nothing to release.");
        var own = run.AssigneeId == caller.UserId;
        if (!own && role != StudyRole.Lead)
            return Outcome<RunDto>.Forbidden($"Run {run.Number} is claimed by {run.AssigneeName}; only they or the lead may release it.");

        var now = time.GetUtcNow();
        await using var transaction = await db.Database.BeginTransactionAsync(cancellationToken);
        var updated = await db.Runs.Where(r => r.Id == runId && r.Version == run.Version && r.State == RunState.Claimed)
            .ReturnToOpenAsync(now, cancellationToken);
        if (updated != 1)
            return Outcome<RunDto>.Conflict($"Run {run.Number} changed while it was being released; look at it again.");
        db.AuditEvents.Add(Audit.Event(caller, run.StudyId, runId, "run.released",
            own ? $"{caller.UserName} released run {run.Number}" : $"{caller.UserName} released run {run.Number}, claimed by {run.AssigneeName}", now));
        await db.SaveChangesAsync(cancellationToken);
        await transaction.CommitAsync(cancellationToken);
        db.ChangeTracker.Clear();
        changes.Publish(new StudyChange(run.StudyId, StudyChangeKind.Claims, await db.ResultSetVersionAsync(run.StudyId, cancellationToken)));
        return Outcome<RunDto>.Ok((await queries.ListByIdsAsync(run.StudyId, [runId], cancellationToken))[0]);
    }

    /// <summary>The lead hands open runs to a member with the analyst or lead role: all of them, or none when one
    /// of them is not open any more.</summary>
    public async Task<Outcome<IReadOnlyList<RunDto>>> AssignAsync(Caller caller, int studyId, AssignRequest? request, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var (_, denied) = await db.RequireAsync<IReadOnlyList<RunDto>>(caller, studyId, StudyRole.Lead, "assign runs", cancellationToken);
        if (denied is not null) return denied;
        var errors = new ValidationErrors();
        var numbers = request?.Runs?.Distinct().ToList() ?? [];
        if (numbers.Count == 0) errors.Add("runs", "Name the run numbers to assign, for example [3, 4, 5].");
        if (numbers.Count > ResultRules.MaxClaimCount) errors.Add("runs", $"Assign at most {ResultRules.MaxClaimCount} runs at a time.");
        if (string.IsNullOrWhiteSpace(request?.Assignee)) errors.Add("assignee", "Name the member (user name) to assign the runs to.");
        if (ResultRules.CheckLeaseHours(request?.LeaseHours) is { } leaseError) errors.Add("leaseHours", leaseError);
        if (!errors.IsEmpty) return Outcome<IReadOnlyList<RunDto>>.Invalid(errors);

        var normalized = request!.Assignee.Trim().ToUpperInvariant();
        var member = await db.StudyMembers.Where(m => m.StudyId == studyId && m.User!.NormalizedUserName == normalized)
            .Select(m => new { m.UserId, m.User!.UserName, m.Role }).FirstOrDefaultAsync(cancellationToken);
        if (member is null)
            return Outcome<IReadOnlyList<RunDto>>.Invalid(ValidationErrors.Single("assignee", $"'{request.Assignee}' is not a member of this study; add them first."));
        if (member.Role < StudyRole.Analyst)
            return Outcome<IReadOnlyList<RunDto>>.Invalid(ValidationErrors.Single("assignee", $"{member.UserName} is a viewer; runs go to analysts or leads."));

        var hours = request.LeaseHours ?? await db.Studies.Where(s => s.Id == studyId).Select(s => s.LeaseHours).FirstAsync(cancellationToken);
        var now = time.GetUtcNow();
        await using var transaction = await db.Database.BeginTransactionAsync(cancellationToken);
        var runs = await db.Runs.Where(r => r.StudyId == studyId && numbers.Contains(r.Number))
            .Select(r => new { r.Id, r.Number, r.State }).ToListAsync(cancellationToken);
        var missing = numbers.Except(runs.Select(r => r.Number)).Order().ToList();
        if (missing.Count > 0)
            return Outcome<IReadOnlyList<RunDto>>.Invalid(ValidationErrors.Single("runs", $"This study has no run {string.Join(", ", missing)}; nothing was assigned."));
        var ids = runs.Select(r => r.Id).ToList();
        var assigned = await db.Runs.Where(r => ids.Contains(r.Id) && r.State == RunState.Open)
            .ClaimForAsync(member.UserId, hours, now, cancellationToken);
        if (assigned != ids.Count)
        {
            await transaction.RollbackAsync(cancellationToken);
            var busy = await db.Runs.AsNoTracking().Where(r => ids.Contains(r.Id) && r.State != RunState.Open)
                .OrderBy(r => r.Number).Select(r => r.Number).ToListAsync(cancellationToken);
            return Outcome<IReadOnlyList<RunDto>>.Conflict(
                $"Run {string.Join(", ", busy)} {(busy.Count == 1 ? "is" : "are")} not open any more; nothing was assigned. Release {(busy.Count == 1 ? "it" : "them")} first or pick open runs.");
        }
        db.AuditEvents.AddRange(runs.Select(r => Audit.Event(caller, studyId, r.Id, "run.assigned",
            $"{caller.UserName} assigned run {r.Number} to {member.UserName}{LeaseText(hours)}", now)));
        await db.SaveChangesAsync(cancellationToken);
        await transaction.CommitAsync(cancellationToken);
        db.ChangeTracker.Clear();
        changes.Publish(new StudyChange(studyId, StudyChangeKind.Claims, await db.ResultSetVersionAsync(studyId, cancellationToken)));
        return Outcome<IReadOnlyList<RunDto>>.Ok(await queries.ListByIdsAsync(studyId, ids, cancellationToken));
    }

    internal sealed record RunRow(int Id, int StudyId, int Number, RunState State, Guid? AssigneeId, string? AssigneeName,
        DateTimeOffset? LeaseExpiresAt, double? LeaseHours, int Version);

    internal Task<RunRow?> FindAsync(int runId, CancellationToken cancellationToken) =>
        db.Runs.AsNoTracking().Where(r => r.Id == runId)
            .Select(r => new RunRow(r.Id, r.StudyId, r.Number, r.State, r.AssigneeId, r.Assignee!.UserName, r.LeaseExpiresAt, r.LeaseHours, r.Version))
            .FirstOrDefaultAsync(cancellationToken);

    private static string NotHolding(RunRow run, Caller caller) => run.State switch
    {
        RunState.Claimed when run.AssigneeId == caller.UserId => $"Your lease on run {run.Number} lapsed at {run.LeaseExpiresAt:u}; the run goes back to the open pool. Claim again to continue.",
        RunState.Claimed => $"Run {run.Number} is claimed by {run.AssigneeName}, not by you.",
        _ => $"Run {run.Number} is {StateName(run.State)}; you no longer hold a claim on it.",
    };

    internal static string StateName(RunState state) => state.ToString().ToLowerInvariant();

    private static string LeaseText(double hours) =>
        string.Create(CultureInfo.InvariantCulture, $" (lease {hours:0.##} h)");

}
