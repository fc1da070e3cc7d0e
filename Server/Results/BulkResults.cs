using System.Globalization;
using System.Text.RegularExpressions;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Runs;
using Runfold.Server.Studies;
using Runfold.Server.Telemetry;
using Runfold.Shared.Studies;

namespace Runfold.Server.Results;

/// <summary>
/// Bulk results files (DESIGN.md §5): a <c>run</c> column with the run number, one column per response (header
/// matched case-insensitively, a unit in brackets allowed), optional <c>state</c> and <c>note</c>. Every row is
/// checked first; then all are stored in one transaction — or nothing, with a row/column/message list.
/// </summary>
public sealed partial class BulkResults(RunfoldDbContext db, TimeProvider time, IStudyChangeNotifier changes, ResultService results)
{
    /// <summary>More problems than this are summed up rather than listed one by one.</summary>
    private const int MaxListedErrors = 200;

    public async Task<BulkUploadResult> UploadAsync(Caller caller, int studyId, string? fileName, byte[] content, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var (role, denied) = await db.RequireAsync<BulkUploadReport>(caller, studyId, StudyRole.Analyst, "upload results", cancellationToken);
        if (denied is not null) return new BulkUploadResult(denied, []);

        var (table, unreadable) = ResultFiles.Read(content, fileName);
        if (table is null) return Fail([new BulkRowError(1, null, unreadable!)]);

        var responses = await results.ResponsesAsync(studyId, cancellationToken);
        var factors = await db.StudyFactors.AsNoTracking().Where(f => f.StudyId == studyId).Select(f => f.Name).ToListAsync(cancellationToken);
        var warnings = new List<string>();
        var errors = new List<BulkRowError>();
        var layout = MapColumns(table.Headers, responses, factors, warnings, errors);
        if (errors.Count > 0) return Fail(errors);

        var decimalSeparator = DecimalSeparator(table, layout, errors);
        if (errors.Count > 0) return Fail(errors);

        var runs = await db.Runs.AsNoTracking().Where(r => r.StudyId == studyId)
            .LeftJoin(db.ResultRevisions, r => new { RunId = r.Id, Revision = r.CurrentRevision }, v => new { v.RunId, v.Revision },
                (r, v) => new StoredRun(r.Id, r.Number, r.State, r.AssigneeId, r.Assignee!.UserName, r.Version, r.RevisionCount,
                    v == null ? null : v.Values, v == null ? null : v.Note))
            .ToDictionaryAsync(r => r.Number, cancellationToken);

        var accepted = new List<(StoredRun Run, CheckedResult Result)>();
        var seen = new Dictionary<int, int>();
        int unchanged = 0, skipped = 0;
        var storedAsDone = false;
        for (var i = 0; i < table.Rows.Count; i++)
        {
            var cells = table.Rows[i];
            var row = table.RowNumbers[i];
            var runCell = Cell(cells, layout.Run);
            if (!int.TryParse(runCell.Number is { } n ? n.ToString(CultureInfo.InvariantCulture) : runCell.Text.Trim(), NumberStyles.Integer, CultureInfo.InvariantCulture, out var number))
            {
                errors.Add(new BulkRowError(row, table.Headers[layout.Run], runCell.IsEmpty
                    ? "The run number is missing."
                    : $"'{runCell.Text}' is not a run number."));
                continue;
            }
            if (seen.TryGetValue(number, out var earlierRow))
            {
                errors.Add(new BulkRowError(row, table.Headers[layout.Run], $"Run {number} is also on row {earlierRow}; give each run once."));
                continue;
            }
            seen[number] = row;
            if (!runs.TryGetValue(number, out var run))
            {
                errors.Add(new BulkRowError(row, table.Headers[layout.Run], $"This study has no run {number}."));
                continue;
            }

            var values = new List<KeyValuePair<string, ResultValue>>();
            foreach (var (column, response) in layout.Responses)
            {
                var cell = Cell(cells, column);
                if (cell.IsEmpty) continue;
                values.Add(KeyValuePair.Create(response, cell.Number is { } d ? ResultValue.Of(d) : ResultValue.Parse(cell.Text, decimalSeparator)));
            }
            var note = layout.Note is { } noteColumn ? Unescape(Cell(cells, noteColumn).Text) : null;
            var stateText = layout.State is { } stateColumn ? Cell(cells, stateColumn).Text.Trim() : "";
            RunState state;
            switch (stateText.ToUpperInvariant())
            {
                case "" or "OPEN" or "CLAIMED" when values.Count == 0 && (stateText.Length > 0 || string.IsNullOrWhiteSpace(note)):
                    skipped++; // an exported run without a result, or an empty row
                    continue;
                case "" or "DONE":
                    state = RunState.Done;
                    break;
                case "OPEN" or "CLAIMED":
                    state = RunState.Done;
                    storedAsDone = true;
                    break;
                case "FAILED":
                    state = RunState.Failed;
                    break;
                default:
                    errors.Add(new BulkRowError(row, table.Headers[layout.State!.Value], $"'{stateText}' is not a result state; use done or failed (or leave it empty for done)."));
                    continue;
            }

            var check = ResultRules.Check(responses, state, values, note, null, name => name);
            if (!check.IsValid)
            {
                foreach (var (field, messages) in check.Errors.ToDictionary())
                    foreach (var message in messages)
                        errors.Add(new BulkRowError(row, HeaderOf(field, table, layout), message));
                continue;
            }
            if (role != StudyRole.Lead && !ResultService.HeldBy(run.State, run.AssigneeId, caller.UserId))
            {
                errors.Add(new BulkRowError(row, null, run.State == RunState.Open
                    ? $"Run {number} is open; claim it before uploading its result (or ask the lead)."
                    : $"Run {number} is held by {run.Holder ?? "someone else"}; only they or the lead may upload its result."));
                continue;
            }
            var result = check.Value!;
            if (run.CurrentValues is not null && run.State == result.State && result.SameAs(run.State, run.CurrentValues, run.CurrentNote))
            {
                unchanged++;
                continue;
            }
            accepted.Add((run, result));
        }
        if (errors.Count > 0) return Fail(errors);
        if (storedAsDone) warnings.Add("Rows whose state said open or claimed but that carry values are stored as done.");

        if (accepted.Count > 0 && await StoreAsync(caller, studyId, fileName, accepted, cancellationToken) is { } conflict)
            return new BulkUploadResult(conflict, []);
        return new BulkUploadResult(Outcome<BulkUploadReport>.Ok(new BulkUploadReport(accepted.Count, unchanged, skipped, warnings)), []);
    }

    private async Task<Outcome<BulkUploadReport>?> StoreAsync(Caller caller, int studyId, string? fileName,
        List<(StoredRun Run, CheckedResult Result)> accepted, CancellationToken cancellationToken)
    {
        var now = time.GetUtcNow();
        var source = string.IsNullOrWhiteSpace(fileName) ? "a results file" : Path.GetFileName(fileName);
        await using var transaction = await db.Database.BeginTransactionAsync(cancellationToken);
        foreach (var (run, result) in accepted)
        {
            var updated = await db.Runs.Where(r => r.Id == run.Id && r.Version == run.Version)
                .StoreRevisionAsync(result.State, now, cancellationToken);
            if (updated != 1)
            {
                await transaction.RollbackAsync(cancellationToken);
                return Outcome<BulkUploadReport>.Conflict($"Run {run.Number} changed while the file was being stored; nothing was stored. Upload the file again.");
            }
            var revision = run.RevisionCount + 1;
            db.ResultRevisions.Add(ResultService.NewRevision(caller, run.Id, revision, result, null, null, now));
            db.AuditEvents.Add(Audit.Event(caller, studyId, run.Id, "result.stored",
                ResultService.Describe(caller, run.Number, revision, result) + $" from {source}", now));
        }
        await db.SaveChangesAsync(cancellationToken);
        var version = await db.BumpResultSetAsync(studyId, now, cancellationToken);
        await transaction.CommitAsync(cancellationToken);
        db.ChangeTracker.Clear();
        changes.Publish(new StudyChange(studyId, StudyChangeKind.Results, version));
        RunfoldMetrics.ResultsUploaded("done", "bulk", accepted.Count(a => a.Result.State == RunState.Done));
        RunfoldMetrics.ResultsUploaded("failed", "bulk", accepted.Count(a => a.Result.State == RunState.Failed));
        return null;
    }

    private sealed record StoredRun(int Id, int Number, RunState State, Guid? AssigneeId, string? Holder, int Version, int RevisionCount,
        Dictionary<string, double>? CurrentValues, string? CurrentNote);

    private sealed record Layout(int Run, int? State, int? Note, IReadOnlyList<(int Column, string Response)> Responses);

    /// <summary>Headers → columns: run, state, note, responses; factor and wave columns (as in the export) are
    /// known and ignored; other columns are ignored with a warning.</summary>
    private static Layout MapColumns(IReadOnlyList<string> headers, ResponseSet responses, IReadOnlyList<string> factors,
        List<string> warnings, List<BulkRowError> errors)
    {
        int? run = null, state = null, note = null;
        var mapped = new List<(int, string)>();
        var used = new Dictionary<string, string>(StringComparer.OrdinalIgnoreCase);
        for (var c = 0; c < headers.Count; c++)
        {
            var header = headers[c].Trim().TrimStart('\uFEFF');
            var match = HeaderPattern().Match(header);
            var name = match.Groups["name"].Value.Trim();
            var unit = match.Groups["unit"].Success ? match.Groups["unit"].Value.Trim() : null;
            if (name.Length == 0)
            {
                if (header.Length > 0) errors.Add(new BulkRowError(1, header, "This header has no name before its unit."));
                continue;
            }
            if (used.TryGetValue(name, out var first))
            {
                errors.Add(new BulkRowError(1, header, $"The column '{name}' appears twice ('{first}' and '{header}')."));
                continue;
            }
            used[name] = header;
            var index = responses.IndexOf(name);
            if (index >= 0)
            {
                var expected = responses[index].Unit;
                if (unit is not null && expected is not null && !SameUnit(unit, expected))
                    errors.Add(new BulkRowError(1, header, $"The column says [{unit}] but {responses[index].Name} is in {expected}; convert the values or fix the header."));
                mapped.Add((c, responses[index].Name));
            }
            else if (string.Equals(name, "run", StringComparison.OrdinalIgnoreCase)) run = c;
            else if (string.Equals(name, "state", StringComparison.OrdinalIgnoreCase)) state = c;
            else if (string.Equals(name, "note", StringComparison.OrdinalIgnoreCase)) note = c;
            else if (string.Equals(name, "wave", StringComparison.OrdinalIgnoreCase) || factors.Contains(name, StringComparer.OrdinalIgnoreCase)) { }
            else warnings.Add($"The column '{header}' is not a response of this study; it was ignored.");
        }
        if (run is null)
            errors.Add(new BulkRowError(1, null, "The file has no 'run' column; the first row must name the columns, with the run number under 'run'."));
        if (mapped.Count == 0 && state is null)
            errors.Add(new BulkRowError(1, null, $"No column is named after a response of this study ({string.Join(", ", responses.Responses.Select(r => r.Name))})."));
        return new Layout(run ?? 0, state, note, mapped);
    }

    /// <summary>A semicolon-separated file may use decimal commas, as long as it does so throughout; a
    /// comma-separated file uses decimal points.</summary>
    private static char DecimalSeparator(UploadedTable table, Layout layout, List<BulkRowError> errors)
    {
        (int Row, string Column)? firstComma = null, firstPoint = null;
        for (var i = 0; i < table.Rows.Count; i++)
            foreach (var (column, _) in layout.Responses)
            {
                var cell = Cell(table.Rows[i], column);
                if (cell.Number is not null || cell.IsEmpty) continue;
                var text = cell.Text.Trim();
                if (DecimalCommaPattern().IsMatch(text)) firstComma ??= (table.RowNumbers[i], table.Headers[column]);
                else if (DecimalPointPattern().IsMatch(text)) firstPoint ??= (table.RowNumbers[i], table.Headers[column]);
            }
        if (firstComma is null) return '.';
        if (table.Delimiter == ',')
        {
            errors.Add(new BulkRowError(firstComma.Value.Row, firstComma.Value.Column,
                "This comma-separated file has a decimal comma; use decimal points, or separate the columns with semicolons."));
            return '.';
        }
        if (firstPoint is { } point)
        {
            errors.Add(new BulkRowError(point.Row, point.Column,
                $"The file mixes decimal commas (row {firstComma.Value.Row}) and decimal points (here); use one of them throughout."));
            return '.';
        }
        return ',';
    }

    private static string? HeaderOf(string field, UploadedTable table, Layout layout) => field switch
    {
        "state" => layout.State is { } s ? table.Headers[s] : "state",
        "note" => layout.Note is { } n ? table.Headers[n] : "note",
        _ => layout.Responses.Where(r => r.Response == field).Select(r => table.Headers[r.Column]).FirstOrDefault() ?? field,
    };

    private static TableCell Cell(TableCell[] cells, int column) => column < cells.Length ? cells[column] : TableCell.OfText("");

    private static bool SameUnit(string a, string b) =>
        string.Equals(a.Replace(" ", "", StringComparison.Ordinal), b.Replace(" ", "", StringComparison.Ordinal), StringComparison.Ordinal);

    /// <summary>The export writes a note that a spreadsheet would take for a formula with a leading apostrophe;
    /// reading drops it again, so the note round-trips.</summary>
    internal static string? Unescape(string? note)
    {
        if (string.IsNullOrWhiteSpace(note)) return null;
        return note.Length > 1 && note[0] == '\'' && IsFormulaStart(note[1]) ? note[1..] : note;
    }

    internal static string? Escape(string? note) => note is { Length: > 0 } && IsFormulaStart(note[0]) ? "'" + note : note;

    private static bool IsFormulaStart(char c) => c is '=' or '+' or '-' or '@' or '\t' or '\r';

    private static BulkUploadResult Fail(List<BulkRowError> errors)
    {
        var listed = errors.OrderBy(e => e.Row).Take(MaxListedErrors).ToList();
        var map = new ValidationErrors();
        foreach (var e in listed) map.Add(e.Column is null ? $"row {e.Row}" : $"row {e.Row}, {e.Column}", e.Message);
        var first = listed[0];
        var summary = errors.Count == 1
            ? $"Nothing was stored: row {first.Row}{(first.Column is null ? "" : $", column '{first.Column}'")}: {first.Message}"
            : $"Nothing was stored: the file has {errors.Count} problems{(errors.Count > MaxListedErrors ? $" (the first {MaxListedErrors} are listed)" : "")}; the first is on row {first.Row}{(first.Column is null ? "" : $", column '{first.Column}'")}: {first.Message}";
        return new BulkUploadResult(Outcome<BulkUploadReport>.Unprocessable(map, summary), listed);
    }

    [GeneratedRegex(@"^(?<name>[^\[\]]*?)\s*(\[(?<unit>[^\]]*)\])?$")]
    private static partial Regex HeaderPattern();

    [GeneratedRegex(@"^[-+]?\d*,\d+([eE][-+]?\d+)?$")]
    private static partial Regex DecimalCommaPattern();

    [GeneratedRegex(@"^[-+]?\d*\.\d+([eE][-+]?\d+)?$")]
    private static partial Regex DecimalPointPattern();
}
