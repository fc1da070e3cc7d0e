using System.Net;
using System.Net.Http.Headers;
using System.Text;
using System.Text.Json;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Results;
using Runfold.Server.Tests.Infrastructure;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Results;

/// <summary>POST /api/studies/{id}/results with CSV and XLSX files: every row checked first, then all stored in
/// one transaction, or 422 with a row/column list and nothing stored. Export → upload round-trips.</summary>
public sealed class BulkUploadTests : IAsyncLifetime
{
    private RunfoldApp _app = null!;
    private StudyDetail _study = null!;
    private HttpClient _lead = null!;

    public async Task InitializeAsync()
    {
        _app = await RunfoldApp.StartAsync(extra: new Dictionary<string, string?> { ["RUNFOLD_MAX_UPLOAD_MB"] = "5" });
        _study = await TestTeam.CreateStudyAsync(_app, TestTeam.HeatSinkStudy("Bulk", 3, 2)); // runs 1…6
        _lead = _app.AdminClient();
    }

    public async Task DisposeAsync()
    {
        _lead.Dispose();
        await _app.DisposeAsync();
    }

    private Task<HttpResponseMessage> UploadAsync(string csv, string fileName = "results.csv", bool bom = false, HttpClient? client = null) =>
        UploadAsync(bom ? [.. Encoding.UTF8.GetPreamble(), .. Encoding.UTF8.GetBytes(csv)] : Encoding.UTF8.GetBytes(csv), fileName, client);

    private Task<HttpResponseMessage> UploadAsync(byte[] content, string fileName, HttpClient? client = null)
    {
        var form = new MultipartFormDataContent();
        var file = new ByteArrayContent(content);
        file.Headers.ContentType = new MediaTypeHeaderValue(fileName.EndsWith(".xlsx", StringComparison.Ordinal) ? ResultFiles.XlsxMediaType : "text/csv");
        form.Add(file, "file", fileName);
        return (client ?? _lead).PostAsync($"/api/studies/{_study.Id}/results", form);
    }

    private async Task<int> RevisionsAsync()
    {
        await using var db = _app.Db();
        return await db.ResultRevisions.CountAsync(v => db.Runs.Any(r => r.Id == v.RunId && r.StudyId == _study.Id));
    }

    private async Task<Dictionary<int, RunDto>> RunsAsync() =>
        (await (await _lead.GetAsync($"/api/studies/{_study.Id}/runs")).ReadAsync<List<RunDto>>()).ToDictionary(r => r.Number);

    private const string Good = """
        run,Thermal_Resistance [K/W],pressure_drop [Pa],MASS,note
        1,0.52,24.5,101.5,first
        2,0.47,31,118,
        3,0.44,38.25,135,"mesh 3, refined"
        """;

    [Fact]
    public async Task A_good_file_is_stored_as_one_revision_per_row_with_headers_matched_case_insensitively_with_units()
    {
        var response = await UploadAsync(Good);
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        var report = await response.ReadAsync<BulkUploadReport>();
        Assert.Equal((3, 0, 0), (report.Accepted, report.Unchanged, report.Skipped));
        Assert.Empty(report.Warnings);
        var runs = await RunsAsync();
        Assert.Equal(0.52, runs[1].Result!.Values["thermal_resistance"]);
        Assert.Equal(38.25, runs[3].Result!.Values["pressure_drop"]);
        Assert.Equal("mesh 3, refined", runs[3].Result!.Note);
        Assert.Equal(RunState.Done, runs[2].State);
        Assert.Equal(RunState.Open, runs[4].State);
        var stored = await TestTeam.EventsAsync(_app, _study.Id, "result.stored");
        Assert.Equal(3, stored.Count);
        Assert.All(stored, e => Assert.EndsWith("from results.csv", e.Detail, StringComparison.Ordinal));
    }

    [Fact]
    public async Task A_UTF8_BOM_is_read_as_text_not_as_part_of_the_first_header()
    {
        var response = await UploadAsync(Good, bom: true);
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        Assert.Equal(3, (await response.ReadAsync<BulkUploadReport>()).Accepted);
    }

    [Fact]
    public async Task A_semicolon_file_with_decimal_commas_is_accepted_when_consistent()
    {
        var response = await UploadAsync("run;thermal_resistance;pressure_drop;mass;state;note\n1;0,52;24,5;101;done;\n2;;;;failed;\"solver diverged; restart\"\n");
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        var runs = await RunsAsync();
        Assert.Equal(0.52, runs[1].Result!.Values["thermal_resistance"]);
        Assert.Equal(24.5, runs[1].Result!.Values["pressure_drop"]);
        Assert.Equal((RunState.Failed, "solver diverged; restart"), (runs[2].State, runs[2].Result!.Note));
    }

    [Fact]
    public async Task Unknown_columns_are_ignored_with_a_warning()
    {
        var response = await UploadAsync("run,thermal_resistance,pressure_drop,mass,cluster_node\n1,0.5,20,100,n042\n");
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        var report = await response.ReadAsync<BulkUploadReport>();
        Assert.Equal(1, report.Accepted);
        Assert.Contains(report.Warnings, w => w.Contains("'cluster_node'", StringComparison.Ordinal) && w.Contains("ignored", StringComparison.Ordinal));
    }

    public static TheoryData<string, string, int, string?, string> BadFiles => new()
    {
        // what, file, row, column, words in the message
        { "duplicate run numbers", "run,thermal_resistance,pressure_drop,mass\n1,0.5,20,100\n2,0.4,25,110\n1,0.5,20,100\n", 4, "run", "also on row 2" },
        { "a run that does not exist", "run,thermal_resistance,pressure_drop,mass\n1,0.5,20,100\n77,0.4,25,110\n", 3, "run", "no run 77" },
        { "not a run number", "run,thermal_resistance,pressure_drop,mass\n1,0.5,20,100\nfirst,0.4,25,110\n", 3, "run", "'first' is not a run number" },
        { "text for a number", "run,thermal_resistance,pressure_drop,mass\n1,0.5,20,100\n2,0.4,high,110\n", 3, "pressure_drop", "'high' is not a number" },
        { "NaN", "run,thermal_resistance,pressure_drop,mass\n1,NaN,20,100\n", 2, "thermal_resistance", "NaN" },
        { "infinity", "run,thermal_resistance,pressure_drop,mass\n1,0.5,Infinity,100\n", 2, "pressure_drop", "infinite" },
        { "a missing value", "run,thermal_resistance,pressure_drop,mass\n1,0.5,,100\n", 2, "pressure_drop", "missing" },
        { "an unknown state", "run,thermal_resistance,pressure_drop,mass,state\n1,0.5,20,100,finished\n", 2, "state", "not a result state" },
        { "failed without a reason", "run,thermal_resistance,pressure_drop,mass,state\n1,,,,failed\n", 2, "note", "reason" },
        { "no run column", "number,thermal_resistance,pressure_drop,mass\n1,0.5,20,100\n", 1, null, "no 'run' column" },
        { "no response column", "run,temperature\n1,80\n", 1, null, "No column is named after a response" },
        { "a response twice", "run,mass,thermal_resistance,pressure_drop,Mass [g]\n1,100,0.5,20,100\n", 1, "Mass [g]", "appears twice" },
        { "a different unit", "run,thermal_resistance [K/mW],pressure_drop,mass\n1,500,20,100\n", 1, "thermal_resistance [K/mW]", "is in K/W" },
        { "mixed decimal commas and points", "run;thermal_resistance;pressure_drop;mass\n1;0,5;20;100\n2;0.4;25;110\n", 3, "thermal_resistance", "mixes decimal commas" },
        { "decimal comma in a comma file", "run,thermal_resistance,pressure_drop,mass\n1,\"0,5\",20,100\n", 2, "thermal_resistance", "decimal comma" },
        { "an empty file", "", 1, null, "empty" },
    };

    [Theory]
    [MemberData(nameof(BadFiles))]
    public async Task A_bad_file_is_422_with_row_column_and_message_and_nothing_is_stored(string what, string csv, int row, string? column, string words)
    {
        // Good rows come first so a partial store would show.
        var response = await UploadAsync(csv);
        Assert.True(response.StatusCode == HttpStatusCode.UnprocessableEntity, $"{what}: {(int)response.StatusCode} {await response.Content.ReadAsStringAsync()}");
        Assert.Equal("application/problem+json", response.Content.Headers.ContentType?.MediaType);
        using var problem = JsonDocument.Parse(await response.Content.ReadAsStringAsync());
        var rows = problem.RootElement.GetProperty("rows").EnumerateArray().ToList();
        Assert.Contains(rows, r => r.GetProperty("row").GetInt32() == row
                                   && (column is null ? !r.TryGetProperty("column", out _) : r.GetProperty("column").GetString() == column)
                                   && r.GetProperty("message").GetString()!.Contains(words, StringComparison.OrdinalIgnoreCase));
        Assert.StartsWith("Nothing was stored", problem.RootElement.GetProperty("detail").GetString(), StringComparison.Ordinal);
        Assert.Equal(0, await RevisionsAsync());
        Assert.All((await RunsAsync()).Values, r => Assert.Equal(RunState.Open, r.State));
    }

    [Fact]
    public async Task A_50_MB_file_is_refused_with_413_and_a_sentence_and_nothing_is_stored()
    {
        var big = new StringBuilder("run,thermal_resistance,pressure_drop,mass,note\n1,0.5,20,100,");
        big.Append('x', 50 * 1024 * 1024);
        var response = await UploadAsync(big.ToString());
        Assert.Equal(HttpStatusCode.RequestEntityTooLarge, response.StatusCode);
        using var problem = JsonDocument.Parse(await response.Content.ReadAsStringAsync());
        var detail = problem.RootElement.GetProperty("detail").GetString()!;
        Assert.Contains("50 MB", detail, StringComparison.Ordinal);
        Assert.Contains("5 MB", detail, StringComparison.Ordinal);
        Assert.Contains("nothing was stored", detail, StringComparison.Ordinal);
        Assert.Equal(0, await RevisionsAsync());
    }

    [Fact]
    public async Task An_XLSX_workbook_is_read_like_a_CSV_file()
    {
        var xlsx = ResultFiles.WriteXlsx(["run", "thermal_resistance [K/W]", "pressure_drop", "mass", "note"],
            [[1, 0.52, 24.5, 101.0, "from the workbook"], [2, 0.47, 31.0, 118.0, null]]);
        var response = await UploadAsync(xlsx, "results.xlsx");
        Assert.Equal(HttpStatusCode.OK, response.StatusCode);
        Assert.Equal(2, (await response.ReadAsync<BulkUploadReport>()).Accepted);
        var runs = await RunsAsync();
        Assert.Equal((0.52, "from the workbook"), (runs[1].Result!.Values["thermal_resistance"], runs[1].Result!.Note));
    }

    [Theory]
    [InlineData("csv")]
    [InlineData("xlsx")]
    public async Task The_export_uploads_again_unchanged_and_an_edited_export_stores_the_edits(string format)
    {
        Assert.Equal(HttpStatusCode.OK, (await UploadAsync(Good)).StatusCode);
        Assert.Equal(HttpStatusCode.OK, (await UploadAsync("run,state,note\n4,failed,=1+1 mesh crashed\n")).StatusCode);

        var export = await _lead.GetAsync($"/api/studies/{_study.Id}/export?format={format}");
        Assert.Equal(HttpStatusCode.OK, export.StatusCode);
        Assert.Equal(format == "csv" ? "text/csv" : ResultFiles.XlsxMediaType, export.Content.Headers.ContentType?.MediaType);
        var bytes = await export.Content.ReadAsByteArrayAsync();
        var fileName = "bulk-runs." + format;
        Assert.Equal(fileName, export.Content.Headers.ContentDisposition?.FileNameStar ?? export.Content.Headers.ContentDisposition?.FileName?.Trim('"'));
        var revisions = await RevisionsAsync();

        var again = await UploadAsync(bytes, fileName);
        Assert.Equal(HttpStatusCode.OK, again.StatusCode);
        var report = await again.ReadAsync<BulkUploadReport>();
        Assert.Equal((0, 4, 2), (report.Accepted, report.Unchanged, report.Skipped)); // runs 1–3 done, 4 failed; 5–6 open
        Assert.Empty(report.Warnings);
        Assert.Equal(revisions, await RevisionsAsync());
        Assert.Equal("=1+1 mesh crashed", (await RunsAsync())[4].Result!.Note);

        if (format == "csv")
        {
            var text = Encoding.UTF8.GetString(bytes);
            Assert.StartsWith("run,wave,state,fin_height [mm],air_velocity [m/s],thermal_resistance [K/W],pressure_drop [Pa],mass [g],note", text.TrimStart('\uFEFF'), StringComparison.Ordinal);
            Assert.Contains("'=1+1", text, StringComparison.Ordinal); // a spreadsheet shows it as text, not a formula
            var edited = text.Replace("\n5,1,open,40,6,,,,", "\n5,1,open,40,6,0.61,19,95,", StringComparison.Ordinal);
            Assert.NotEqual(text, edited);
            var stored = await (await UploadAsync(Encoding.UTF8.GetBytes(edited), fileName)).ReadAsync<BulkUploadReport>();
            Assert.Equal(1, stored.Accepted);
            Assert.Equal((RunState.Done, 0.61), ((await RunsAsync())[5].State, (await RunsAsync())[5].Result!.Values["thermal_resistance"]));
        }
    }

    [Fact]
    public async Task An_analyst_uploads_only_the_runs_they_hold_and_a_viewer_not_at_all()
    {
        var ana = await TestTeam.PersonAsync(_app, "ana");
        var vik = await TestTeam.PersonAsync(_app, "vik");
        await TestTeam.JoinAsync(_app, _study.Id, "ana", StudyRole.Analyst);
        await TestTeam.JoinAsync(_app, _study.Id, "vik", StudyRole.Viewer);
        using var analyst = _app.ClientWithToken(ana);
        using var viewer = _app.ClientWithToken(vik);
        await analyst.PostJsonAsync($"/api/studies/{_study.Id}/claims", new ClaimRequest(2)); // runs 1 and 2

        var refused = await UploadAsync(Good, client: analyst);
        Assert.Equal(HttpStatusCode.UnprocessableEntity, refused.StatusCode);
        Assert.Contains("Run 3 is open; claim it", await refused.Content.ReadAsStringAsync(), StringComparison.Ordinal);
        Assert.Equal(0, await RevisionsAsync());

        var own = await UploadAsync("run,thermal_resistance,pressure_drop,mass\n1,0.5,20,100\n2,0.4,25,110\n", client: analyst);
        Assert.Equal(HttpStatusCode.OK, own.StatusCode);
        Assert.Equal(HttpStatusCode.Forbidden, (await UploadAsync(Good, client: viewer)).StatusCode);
    }
}
