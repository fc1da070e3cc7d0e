using System.Globalization;
using System.Text;
using CsvHelper;
using MiniExcelLibs;

namespace Runfold.Server.Results;

/// <summary>One cell of an uploaded table: a number (an XLSX numeric cell) or text (everything else).</summary>
public readonly record struct TableCell(string Text, double? Number)
{
    public bool IsEmpty => Number is null && string.IsNullOrWhiteSpace(Text);

    public static TableCell OfText(string? text) => new(text ?? "", null);
}

/// <summary>A results file read into rows of cells. <see cref="RowNumbers"/> are spreadsheet row numbers (the
/// header is row 1), so error messages point where a person looks. <see cref="Delimiter"/> is the CSV
/// delimiter, or null for XLSX.</summary>
public sealed record UploadedTable(IReadOnlyList<string> Headers, IReadOnlyList<TableCell[]> Rows, IReadOnlyList<int> RowNumbers, char? Delimiter);

/// <summary>Reads CSV (comma or semicolon, UTF-8 with or without BOM) and XLSX results files, and writes the
/// export in both formats.</summary>
public static class ResultFiles
{
    public const string CsvMediaType = "text/csv";
    public const string XlsxMediaType = "application/vnd.openxmlformats-officedocument.spreadsheetml.sheet";

    /// <summary>The table, or a sentence saying why the file cannot be read.</summary>
    public static (UploadedTable? Table, string? Error) Read(byte[] content, string? fileName)
    {
        ArgumentNullException.ThrowIfNull(content);
        if (content.Length == 0) return (null, "The file is empty.");
        var isZip = content.Length > 4 && content[0] == 'P' && content[1] == 'K' && content[2] == 3 && content[3] == 4;
        if (isZip || fileName?.EndsWith(".xlsx", StringComparison.OrdinalIgnoreCase) == true)
            return ReadXlsx(content);
        if (fileName?.EndsWith(".xls", StringComparison.OrdinalIgnoreCase) == true)
            return (null, "Old .xls workbooks are not read; save the sheet as .xlsx or .csv.");
        return ReadCsv(content);
    }

    private static (UploadedTable?, string?) ReadCsv(byte[] content)
    {
        string text;
        try
        {
            using var reader = new StreamReader(new MemoryStream(content), new UTF8Encoding(false, throwOnInvalidBytes: true), detectEncodingFromByteOrderMarks: true);
            text = reader.ReadToEnd();
        }
        catch (DecoderFallbackException)
        {
            return (null, "The file is not UTF-8 text; save it as CSV UTF-8 (or as .xlsx).");
        }
        if (text.Contains('\0', StringComparison.Ordinal)) return (null, "The file is not a CSV text file or an .xlsx workbook.");
        var firstLine = text.AsSpan()[..Math.Max(0, text.IndexOfAny(['\r', '\n']) is var end and >= 0 ? end : text.Length)];
        var delimiter = CountOutsideQuotes(firstLine, ';') > CountOutsideQuotes(firstLine, ',') ? ';' : ',';

        var headers = new List<string>();
        var rows = new List<TableCell[]>();
        var numbers = new List<int>();
        var options = new CsvReaderOptions { Separator = delimiter, HasHeader = false, TrimWhitespace = true, SkipEmptyLines = true, TrackLineNumbers = true };
        using var csv = CsvReader.FromText(text, options);
        var record = 0;
        while (csv.Read())
        {
            record++;
            var fields = new string[csv.FieldCount];
            for (var i = 0; i < fields.Length; i++) fields[i] = csv.GetString(i) ?? "";
            if (record == 1)
            {
                headers.AddRange(fields);
                continue;
            }
            if (fields.All(string.IsNullOrWhiteSpace)) continue;
            rows.Add([.. fields.Select(TableCell.OfText)]);
            numbers.Add(record);
        }
        return headers.Count == 0 ? (null, "The file has no header row.") : (new UploadedTable(headers, rows, numbers, delimiter), null);
    }

    private static (UploadedTable?, string?) ReadXlsx(byte[] content)
    {
        var headers = new List<string>();
        var rows = new List<TableCell[]>();
        var numbers = new List<int>();
        try
        {
            using var stream = new MemoryStream(content);
            var rowNumber = 0;
            List<string>? columns = null;
            foreach (IDictionary<string, object?> row in MiniExcel.Query(stream, useHeaderRow: false, excelType: ExcelType.XLSX))
            {
                rowNumber++;
                if (columns is null)
                {
                    columns = [.. row.Keys];
                    headers.AddRange(columns.Select(c => Convert.ToString(row[c], CultureInfo.InvariantCulture)?.Trim() ?? ""));
                    while (headers.Count > 0 && headers[^1].Length == 0) headers.RemoveAt(headers.Count - 1);
                    continue;
                }
                var cells = columns.Take(headers.Count).Select(c => ToCell(row.TryGetValue(c, out var v) ? v : null)).ToArray();
                if (cells.All(c => c.IsEmpty)) continue;
                rows.Add(cells);
                numbers.Add(rowNumber);
            }
        }
#pragma warning disable CA1031 // any failure of the reader means the workbook cannot be read
        catch (Exception)
#pragma warning restore CA1031
        {
            return (null, "The file could not be read as an .xlsx workbook; save it again from the spreadsheet, or as CSV.");
        }
        return headers.Count == 0 ? (null, "The workbook's first sheet has no header row.") : (new UploadedTable(headers, rows, numbers, null), null);
    }

    private static TableCell ToCell(object? value) => value switch
    {
        null => TableCell.OfText(""),
        double d => new TableCell(d.ToString("R", CultureInfo.InvariantCulture), d),
        float f => new TableCell(f.ToString("R", CultureInfo.InvariantCulture), f),
        int or long or decimal => new TableCell(Convert.ToString(value, CultureInfo.InvariantCulture)!, Convert.ToDouble(value, CultureInfo.InvariantCulture)),
        _ => TableCell.OfText(Convert.ToString(value, CultureInfo.InvariantCulture)?.Trim()),
    };

    private static int CountOutsideQuotes(ReadOnlySpan<char> line, char c)
    {
        var count = 0;
        var quoted = false;
        foreach (var ch in line)
        {
            if (ch == '"') quoted = !quoted;
            else if (ch == c && !quoted) count++;
        }
        return count;
    }

    /// <summary>CSV with a UTF-8 BOM (so spreadsheets read the accents right), comma-separated, numbers in
    /// round-trip form with a decimal point.</summary>
    public static byte[] WriteCsv(IReadOnlyList<string> headers, IEnumerable<object?[]> rows)
    {
        using var buffer = new MemoryStream();
        using (var csv = CsvWriter.Create(buffer, new CsvWriterOptions { WriteByteOrderMark = true }, leaveOpen: true))
        {
            foreach (var header in headers) csv.WriteField(header);
            csv.EndRecord();
            foreach (var row in rows)
            {
                foreach (var cell in row)
                    csv.WriteField(cell switch
                    {
                        null => "",
                        double d => d.ToString("R", CultureInfo.InvariantCulture),
                        int i => i.ToString(CultureInfo.InvariantCulture),
                        _ => Convert.ToString(cell, CultureInfo.InvariantCulture) ?? "",
                    });
                csv.EndRecord();
            }
            csv.Flush();
        }
        return buffer.ToArray();
    }

    /// <summary>One sheet, the header in row 1, numbers as numeric cells.</summary>
    public static byte[] WriteXlsx(IReadOnlyList<string> headers, IEnumerable<object?[]> rows)
    {
        var sheet = rows.Select(row =>
        {
            var line = new Dictionary<string, object?>(headers.Count, StringComparer.Ordinal);
            for (var i = 0; i < headers.Count; i++) line[headers[i]] = row[i];
            return line;
        }).ToList();
        using var buffer = new MemoryStream();
        if (sheet.Count == 0) sheet.Add(headers.ToDictionary(h => h, _ => (object?)null, StringComparer.Ordinal));
        buffer.SaveAs(sheet, printHeader: true, sheetName: "runs", excelType: ExcelType.XLSX);
        return buffer.ToArray();
    }
}
