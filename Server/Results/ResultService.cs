using System.Globalization;
using System.Security.Cryptography;
using System.Text;
using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Data.Entities;
using Runfold.Server.Runs;
using Runfold.Server.Studies;
using Runfold.Server.Telemetry;
using Runfold.Shared.Studies;

namespace Runfold.Server.Results;

/// <summary>
/// Results of single runs: every upload is a new, append-only revision and the newest is current. Only the
/// analyst holding the run's claim, or the lead, may post. An <c>Idempotency-Key</c> makes a retry return the
/// revision stored the first time.
/// </summary>
public sealed class ResultService(RunfoldDbContext db, TimeProvider time, IStudyChangeNotifier changes, RunQueries queries)
{
    public const int MaxIdempotencyKeyLength = 200;

    public Task<Outcome<ResultReceipt>> PutAsync(Caller caller, int runId, ResultRequest? request, string? idempotencyKey, CancellationToken cancellationToken)
    {
        if (request is null)
        {
            var errors = new ValidationErrors();
            errors.Add("body", "The request needs a JSON body: {\"state\": \"done\", \"values\": {\"name\": number}}.");
            return Task.FromResult(Outcome<ResultReceipt>.Invalid(errors));
        }
        var values = (request.Values ?? new Dictionary<string, JsonElement>())
            .Select(v => KeyValuePair.Create(v.Key, FromJson(v.Value)));
        return PutAsync(caller, runId, request.State, values, request.Note, request.SolverSeconds, idempotencyKey, cancellationToken);
    }

    public async Task<Outcome<ResultReceipt>> PutAsync(Caller caller, int runId, RunState state,
        IEnumerable<KeyValuePair<string, ResultValue>> values, string? note, double? solverSeconds, string? idempotencyKey,
        CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        if (idempotencyKey is { Length: > MaxIdempotencyKeyLength })
            return Outcome<ResultReceipt>.Invalid(ValidationErrors.Single("Idempotency-Key", $"The Idempotency-Key is longer than {MaxIdempotencyKeyLength} characters."));
        var key = string.IsNullOrWhiteSpace(idempotencyKey) ? null : idempotencyKey.Trim();

        var run = await db.Runs.AsNoTracking().Where(r => r.Id == runId)
            .Select(r => new { r.Id, r.StudyId, r.Number, r.State, r.AssigneeId, Holder = r.Assignee!.UserName, r.Version, r.RevisionCount })
            .FirstOrDefaultAsync(cancellationToken);
        var role = run is null ? null : await db.RoleAsync(caller, run.StudyId, cancellationToken);
        if (run is null || role is null) return Outcome<ResultReceipt>.NotFound(StudyAccess.RunNotVisible(runId));
        if (role < StudyRole.Analyst) return Outcome<ResultReceipt>.Forbidden(StudyAccess.Refusal(role.Value, StudyRole.Analyst, "upload results"));
        if (role != StudyRole.Lead && !HeldBy(run.State, run.AssigneeId, caller.UserId))
            return Outcome<ResultReceipt>.Forbidden(run.State == RunState.Open
                ? $"Run {run.Number} is open; claim it before uploading its result (or ask the lead)."
                : $"Run {run.Number} is held by {run.Holder ?? "someone else"}; only they or the lead may upload its result.");

        var responses = await ResponsesAsync(run.StudyId, cancellationToken);
        var checkedResult = ResultRules.Check(responses, state, values, note, solverSeconds);
        if (!checkedResult.IsValid) return Outcome<ResultReceipt>.Unprocessable(checkedResult.Errors, "The result does not fit the study's responses: " + checkedResult.Errors.First);
        var result = checkedResult.Value!;
        var hash = key is null ? null : RequestHash(result);

        if (key is not null && await ReplayAsync(run.Id, run.Number, key, hash!, cancellationToken) is { } replay) return replay;

        var now = time.GetUtcNow();
        var revision = run.RevisionCount + 1;
        long version;
        try
        {
            await using var transaction = await db.Database.BeginTransactionAsync(cancellationToken);
            var updated = await db.Runs.Where(r => r.Id == runId && r.Version == run.Version)
                .StoreRevisionAsync(result.State, now, cancellationToken);
            if (updated != 1)
            {
                await transaction.RollbackAsync(cancellationToken);
                return key is not null && await ReplayAsync(run.Id, run.Number, key, hash!, cancellationToken) is { } raced
                    ? raced
                    : Outcome<ResultReceipt>.Conflict($"Run {run.Number} changed while the result was being stored; nothing was stored. Send it again.");
            }
            db.ResultRevisions.Add(NewRevision(caller, runId, revision, result, key, hash, now));
            db.AuditEvents.Add(Audit.Event(caller, run.StudyId, runId, "result.stored", Describe(caller, run.Number, revision, result), now));
            await db.SaveChangesAsync(cancellationToken);
            version = await db.BumpResultSetAsync(run.StudyId, now, cancellationToken);
            await transaction.CommitAsync(cancellationToken);
        }
        catch (DbUpdateException) when (key is not null)
        {
            // The same key was stored by a concurrent retry between our check and our insert.
            db.ChangeTracker.Clear();
            return await ReplayAsync(run.Id, run.Number, key, hash!, cancellationToken)
                   ?? Outcome<ResultReceipt>.Conflict($"Run {run.Number} changed while the result was being stored; nothing was stored. Send it again.");
        }
        db.ChangeTracker.Clear();
        changes.Publish(new StudyChange(run.StudyId, StudyChangeKind.Results, version));
        RunfoldMetrics.ResultsUploaded(result.State == RunState.Done ? "done" : "failed", caller.Source);
        return Outcome<ResultReceipt>.Ok(new ResultReceipt(run.Id, run.Number, revision, result.State));
    }

    /// <summary>A run with every revision of its result, newest first.</summary>
    public async Task<Outcome<RunHistory>> HistoryAsync(Caller caller, int runId, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var studyId = await db.Runs.Where(r => r.Id == runId).Select(r => (int?)r.StudyId).FirstOrDefaultAsync(cancellationToken);
        if (studyId is null || await db.RoleAsync(caller, studyId.Value, cancellationToken) is null)
            return Outcome<RunHistory>.NotFound(StudyAccess.RunNotVisible(runId));
        var run = (await queries.ListByIdsAsync(studyId.Value, [runId], cancellationToken))[0];
        var current = await db.Runs.Where(r => r.Id == runId).Select(r => r.CurrentRevision).FirstAsync(cancellationToken);
        var revisions = await db.ResultRevisions.AsNoTracking().Where(v => v.RunId == runId)
            .OrderByDescending(v => v.Revision)
            .Select(v => new
            {
                v.Revision, v.State, v.Values, v.Note, v.SolverSeconds, v.CreatedAt,
                Author = db.Users.Where(u => u.Id == v.AuthorId).Select(u => u.UserName).FirstOrDefault(),
                Token = db.ApiTokens.Where(t => t.Id == v.ApiTokenId).Select(t => t.Name).FirstOrDefault(),
                v.ApiTokenId,
            })
            .ToListAsync(cancellationToken);
        return Outcome<RunHistory>.Ok(new RunHistory(run, [.. revisions.Select(v => new RevisionDto(
            v.Revision, v.State, v.Values, v.Note, v.SolverSeconds, v.Author ?? "a former member",
            Via(v.ApiTokenId, v.Token), v.CreatedAt, v.Revision == current))]));
    }

    /// <summary>A failed run goes back to the open pool for another try. Its revisions stay as history; it has
    /// no current result until the next upload.</summary>
    public async Task<Outcome<RunDto>> ReopenAsync(Caller caller, int runId, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var run = await db.Runs.AsNoTracking().Where(r => r.Id == runId)
            .Select(r => new { r.StudyId, r.Number, r.State, r.AssigneeId, r.Version }).FirstOrDefaultAsync(cancellationToken);
        var role = run is null ? null : await db.RoleAsync(caller, run.StudyId, cancellationToken);
        if (run is null || role is null) return Outcome<RunDto>.NotFound(StudyAccess.RunNotVisible(runId));
        if (role < StudyRole.Analyst) return Outcome<RunDto>.Forbidden(StudyAccess.Refusal(role.Value, StudyRole.Analyst, "reopen runs"));
        if (run.State != RunState.Failed)
            return Outcome<RunDto>.Conflict($"Run {run.Number} is {RunClaims.StateName(run.State)}; only a failed run can be reopened.");
        if (role != StudyRole.Lead && run.AssigneeId != caller.UserId)
            return Outcome<RunDto>.Forbidden($"Only whoever ran run {run.Number}, or the lead, may reopen it.");

        var now = time.GetUtcNow();
        await using var transaction = await db.Database.BeginTransactionAsync(cancellationToken);
        var updated = await db.Runs.Where(r => r.Id == runId && r.Version == run.Version && r.State == RunState.Failed)
            .ReturnToOpenAsync(now, cancellationToken, dropCurrentResult: true);
        if (updated != 1) return Outcome<RunDto>.Conflict($"Run {run.Number} changed while it was being reopened; look at it again.");
        db.AuditEvents.Add(Audit.Event(caller, run.StudyId, runId, "run.reopened", $"{caller.UserName} reopened failed run {run.Number}", now));
        await db.SaveChangesAsync(cancellationToken);
        var version = await db.BumpResultSetAsync(run.StudyId, now, cancellationToken);
        await transaction.CommitAsync(cancellationToken);
        db.ChangeTracker.Clear();
        changes.Publish(new StudyChange(run.StudyId, StudyChangeKind.Results, version));
        return Outcome<RunDto>.Ok((await queries.ListByIdsAsync(run.StudyId, [runId], cancellationToken))[0]);
    }

    /// <summary>The caller holds the run: it is claimed by them, or they posted its result.</summary>
    internal static bool HeldBy(RunState state, Guid? assignee, Guid caller) =>
        assignee == caller && state is RunState.Claimed or RunState.Done or RunState.Failed;

    internal async Task<ResponseSet> ResponsesAsync(int studyId, CancellationToken cancellationToken)
    {
        var stored = await db.StudyResponses.AsNoTracking().Where(r => r.StudyId == studyId).OrderBy(r => r.Position).ToListAsync(cancellationToken);
        var set = ResponseSet.Create([.. stored.Select(r => r.ToSpec())], null);
        return set.Value ?? throw new InvalidOperationException("A stored study has invalid responses: " + set.Errors);
    }

    internal static ResultRevision NewRevision(Caller caller, int runId, int revision, CheckedResult result, string? key, string? hash, DateTimeOffset now) => new()
    {
        RunId = runId,
        Revision = revision,
        State = result.State,
        Values = new Dictionary<string, double>(result.Values),
        Note = result.Note,
        SolverSeconds = result.SolverSeconds,
        AuthorId = caller.UserId,
        ApiTokenId = caller.ApiTokenId,
        CreatedAt = now,
        IdempotencyKey = key,
        RequestHash = hash,
    };

    internal static string Describe(Caller caller, int number, int revision, CheckedResult result) => result.State == RunState.Done
        ? $"{caller.UserName} stored the result of run {number} (revision {revision})"
        : $"{caller.UserName} marked run {number} failed (revision {revision}): {result.Note}";

    internal static string Via(int? tokenId, string? tokenName) => tokenId is null ? "UI" : $"API token '{tokenName ?? "revoked"}'";

    /// <summary>A JSON value → a response value; text other than NaN/Infinity is "not a number".</summary>
    internal static ResultValue FromJson(JsonElement value) => value.ValueKind switch
    {
        JsonValueKind.Number => value.TryGetDouble(out var d) ? ResultValue.Of(d) : ResultValue.Of(double.PositiveInfinity),
        JsonValueKind.String when ResultValue.Parse(value.GetString()!) is { IsNumber: true } named && !double.IsFinite(named.Number) => named,
        JsonValueKind.String => ResultValue.NotANumber(value.GetString()!),
        _ => ResultValue.NotANumber(value.GetRawText()),
    };

    private async Task<Outcome<ResultReceipt>?> ReplayAsync(int runId, int number, string key, string hash, CancellationToken cancellationToken)
    {
        var earlier = await db.ResultRevisions.AsNoTracking().Where(v => v.RunId == runId && v.IdempotencyKey == key)
            .Select(v => new { v.Revision, v.State, v.RequestHash }).FirstOrDefaultAsync(cancellationToken);
        if (earlier is null) return null;
        if (earlier.RequestHash != hash)
            return Outcome<ResultReceipt>.Unprocessable(ValidationErrors.Single("Idempotency-Key",
                $"This Idempotency-Key was already used for a different result of run {number} (revision {earlier.Revision}); use a new key for a new result."));
        return Outcome<ResultReceipt>.Ok(new ResultReceipt(runId, number, earlier.Revision, earlier.State, Replayed: true));
    }

    private static string RequestHash(CheckedResult result)
    {
        var text = new StringBuilder();
        text.Append(result.State).Append('\n').Append(result.Note).Append('\n')
            .Append(result.SolverSeconds?.ToString("R", CultureInfo.InvariantCulture)).Append('\n');
        foreach (var (name, value) in result.Values.OrderBy(v => v.Key, StringComparer.Ordinal))
            text.Append(name).Append('=').Append(value.ToString("R", CultureInfo.InvariantCulture)).Append('\n');
        return Convert.ToHexStringLower(SHA256.HashData(Encoding.UTF8.GetBytes(text.ToString())));
    }

}
