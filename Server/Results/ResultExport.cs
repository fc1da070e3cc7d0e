using System.Text;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Runs;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Results;

/// <summary>The runs of a study with factors, states and current results, as CSV or XLSX. The columns are those
/// of the bulk upload plus wave and the factors, so the file uploads again unchanged.</summary>
public sealed class ResultExport(RunfoldDbContext db, RunQueries queries)
{
    public async Task<Outcome<ExportFile>> ExportAsync(Caller caller, int studyId, ExportFormat format, CancellationToken cancellationToken)
    {
        ArgumentNullException.ThrowIfNull(caller);
        var (_, denied) = await db.RequireAsync<ExportFile>(caller, studyId, StudyRole.Viewer, "export", cancellationToken);
        if (denied is not null) return denied;
        var study = await db.Studies.AsNoTracking().AsSplitQuery().Include(s => s.Factors).Include(s => s.Responses)
            .FirstAsync(s => s.Id == studyId, cancellationToken);
        var factors = study.Factors.OrderBy(f => f.Position).ToList();
        var responses = study.Responses.OrderBy(r => r.Position).ToList();
        var runs = await queries.ListAsync(studyId, null, cancellationToken);

        var headers = new List<string> { "run", "wave", "state" };
        headers.AddRange(factors.Select(f => WithUnit(f.Name, f.Unit)));
        headers.AddRange(responses.Select(r => WithUnit(r.Name, r.Unit)));
        headers.Add("note");
        var rows = runs.Select(run =>
        {
            var row = new object?[headers.Count];
            row[0] = run.Number;
            row[1] = run.Wave;
            row[2] = RunClaims.StateName(run.State);
            var c = 3;
            foreach (var f in factors)
                row[c++] = run.Factors.TryGetValue(f.Name, out var v) ? (v.Level is { } level ? level : v.Number) : null;
            foreach (var r in responses)
                row[c++] = run.Result?.Values.TryGetValue(r.Name, out var y) == true ? y : null;
            row[c] = BulkResults.Escape(run.Result?.Note);
            return row;
        }).ToList();

        var name = FileStem(study.Name);
        return Outcome<ExportFile>.Ok(format == ExportFormat.Xlsx
            ? new ExportFile(name + ".xlsx", ResultFiles.XlsxMediaType, ResultFiles.WriteXlsx(headers, rows))
            : new ExportFile(name + ".csv", ResultFiles.CsvMediaType + "; charset=utf-8", ResultFiles.WriteCsv(headers, rows)));
    }

    private static string WithUnit(string name, string? unit) => unit is null ? name : $"{name} [{unit}]";

    /// <summary>"Plate-fin heat sink (v2)" → "plate-fin-heat-sink-v2-runs".</summary>
    private static string FileStem(string studyName)
    {
        var stem = new StringBuilder();
        foreach (var c in studyName.ToLowerInvariant())
            if (char.IsAsciiLetterOrDigit(c)) stem.Append(c);
            else if (stem.Length > 0 && stem[^1] != '-') stem.Append('-');
        var text = stem.ToString().Trim('-');
        return (text.Length == 0 ? "study" : text.Length > 60 ? text[..60].TrimEnd('-') : text) + "-runs";
    }
}
