using System.Globalization;
using System.Text.Encodings.Web;
using System.Text.Unicode;
using System.Text;
using Runfold.Client.Components;
using Runfold.Client.Components.Analysis;
using Runfold.Shared.Studies;

namespace Runfold.Server.Reports;

/// <summary>
/// The study report for managers (<c>GET /api/studies/{id}/report</c>): one self-contained HTML file — inline
/// CSS and SVG, no scripts, nothing fetched — with progress, the top candidates and their intervals, the fit
/// check, the sensitivity ranking and the cautions of the design notes (§8). Pure: the same input gives the same
/// bytes. Every text that comes from the study (names, units, descriptions, notes) is HTML-encoded.
/// </summary>
public static class StudyReportWriter
{
    /// <summary>How many candidates the report lists.</summary>
    public const int TopCandidates = 10;

    public static string Write(StudyDetail study, AnalysisSnapshotDto? snapshot, DateTimeOffset generatedAt)
    {
        ArgumentNullException.ThrowIfNull(study);
        var html = new StringBuilder(32 * 1024);
        html.Append("<!DOCTYPE html>\n<html lang=\"en\">\n<head>\n<meta charset=\"utf-8\">\n")
            .Append("<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">\n")
            .Append("<meta name=\"generator\" content=\"Runfold\">\n")
            .Append("<title>").Append(E(study.Name)).Append(" · study report</title>\n<style>").Append(Style).Append("</style>\n</head>\n<body>\n<main>\n");

        html.Append("<header>\n<p class=\"brand\">Runfold · study report</p>\n<h1>").Append(E(study.Name)).Append("</h1>\n");
        if (!string.IsNullOrWhiteSpace(study.Description)) html.Append("<p class=\"lead\">").Append(E(study.Description)).Append("</p>\n");
        html.Append("<p class=\"meta\">Written ").Append(E(Formats.Instant(generatedAt))).Append(". ");
        html.Append(snapshot is null
            ? "No analysis snapshot exists yet."
            : E($"Analysis {snapshot.Version}, {AnalysisText.BasedOn(snapshot)}, computed {Formats.Instant(snapshot.ComputedAt)}."));
        html.Append("</p>\n</header>\n");

        html.Append("<section id=\"caution\" class=\"caution\">\n<h2>Read this first</h2>\n<p>").Append(E(AnalysisText.CandidateCaution))
            .Append("</p>\n<p><strong>").Append(E(AnalysisText.EngineeringCaution)).Append("</strong></p>\n</section>\n");

        WriteProgress(html, study);
        if (snapshot is null)
        {
            html.Append("<section id=\"analysis\">\n<h2>Analysis</h2>\n<p>")
                .Append(E("No surrogate model has been fitted yet; the first analysis follows once enough runs are done."))
                .Append("</p>\n</section>\n");
        }
        else
        {
            if (snapshot.Notice is { } notice) html.Append("<p class=\"notice\">").Append(E(notice)).Append("</p>\n");
            WriteCandidates(html, study, snapshot);
            WriteVerification(html, study, snapshot);
            WriteFitCheck(html, study, snapshot);
            WriteSensitivity(html, snapshot);
        }
        WriteDefinition(html, study);
        html.Append("<footer>Runfold study report · study ").Append(study.Id.ToString(CultureInfo.InvariantCulture));
        if (snapshot is not null) html.Append(" · analysis ").Append(snapshot.Version.ToString(CultureInfo.InvariantCulture));
        html.Append(" · ").Append(E(AnalysisText.EngineeringCaution)).Append("</footer>\n</main>\n</body>\n</html>\n");
        return html.ToString();
    }

    /// <summary>A file name for the download: the study's name as letters, digits and dashes, and the date.</summary>
    public static string FileName(StudyDetail study, DateTimeOffset generatedAt)
    {
        ArgumentNullException.ThrowIfNull(study);
        var slug = new string([.. study.Name.ToLowerInvariant().Select(c => c is >= 'a' and <= 'z' or >= '0' and <= '9' ? c : '-')]);
        while (slug.Contains("--", StringComparison.Ordinal)) slug = slug.Replace("--", "-", StringComparison.Ordinal);
        slug = slug.Trim('-');
        if (slug.Length > 60) slug = slug[..60].TrimEnd('-');
        if (slug.Length == 0) slug = "study-" + study.Id.ToString(CultureInfo.InvariantCulture);
        return $"{slug}-report-{generatedAt.UtcDateTime:yyyyMMdd-HHmm}.html";
    }

    private static void WriteProgress(StringBuilder html, StudyDetail study)
    {
        var c = study.Counts;
        html.Append("<section id=\"progress\">\n<h2>Progress</h2>\n").Append(ReportSvg.StateBar(c))
            .Append("\n<p>").Append(E($"{c.Done} of {c.Total} runs done, {c.Claimed} claimed, {c.Failed} failed, {c.Open} open.")).Append("</p>\n</section>\n");
    }

    private static void WriteCandidates(StringBuilder html, StudyDetail study, AnalysisSnapshotDto snapshot)
    {
        html.Append("<section id=\"candidates\">\n<h2>Top candidates</h2>\n");
        var top = snapshot.Candidates.OrderBy(c => c.Rank).Take(TopCandidates).ToList();
        if (top.Count == 0)
        {
            html.Append("<p>").Append(E("No candidates yet: the surrogates cannot rank designs until every response has a model.")).Append("</p>\n</section>\n");
            return;
        }
        var limited = study.Responses.Where(r => AnalysisText.Limit(r) is not null).ToList();
        // Two tables, so each fits a printed page: the predictions, then the designs themselves.
        html.Append("<div class=\"scroll\"><table>\n<thead><tr><th>Rank</th><th>Status</th><th>Desirability</th>");
        foreach (var r in study.Responses) html.Append("<th>").Append(E(AnalysisText.Label(r.Name, r.Unit))).Append("</th>");
        foreach (var r in limited) html.Append("<th>").Append(E($"P({r.Name} {AnalysisText.Limit(r)})")).Append("</th>");
        html.Append("</tr></thead>\n<tbody>\n");
        foreach (var candidate in top)
        {
            html.Append("<tr><th>").Append(candidate.Rank.ToString(CultureInfo.InvariantCulture)).Append("</th><td>");
            foreach (var (css, word, why) in CandidateStatus.Badges(candidate))
                html.Append("<span class=\"badge ").Append(css).Append("\" title=\"").Append(E(why)).Append("\">").Append(E(word)).Append("</span> ");
            html.Append("</td><td class=\"num\">").Append(E(Formats.Number(candidate.Desirability))).Append("</td>");
            foreach (var r in study.Responses)
                html.Append("<td class=\"num\">").Append(candidate.Predicted.TryGetValue(r.Name, out var p) ? E(AnalysisText.Predicted(p, null)) : "–").Append("</td>");
            foreach (var r in limited)
                html.Append("<td class=\"num\">").Append(candidate.LimitProbabilities?.TryGetValue(r.Name, out var pr) == true ? E(AnalysisText.Percent(pr)) : "–").Append("</td>");
            html.Append("</tr>\n");
        }
        html.Append("</tbody></table></div>\n<h3>The designs</h3>\n<div class=\"scroll\"><table>\n<thead><tr><th>Rank</th>");
        foreach (var f in study.Factors) html.Append("<th>").Append(E(AnalysisText.Label(f.Name, f.Unit))).Append("</th>");
        html.Append("</tr></thead>\n<tbody>\n");
        foreach (var candidate in top)
        {
            html.Append("<tr><td>").Append(candidate.Rank.ToString(CultureInfo.InvariantCulture)).Append("</td>");
            foreach (var f in study.Factors)
                html.Append("<td class=\"num\">").Append(candidate.Factors.TryGetValue(f.Name, out var v) ? E(Formats.Value(v)) : "–").Append("</td>");
            html.Append("</tr>\n");
        }
        html.Append("</tbody></table></div>\n<p class=\"muted\">")
            .Append(E("± is one standard deviation of the surrogate's prediction; about 95 % of outcomes fall within two. " +
                      "P(…) is the predicted probability of meeting the response's limit. Desirability runs from 0 (unacceptable) to 1 (ideal)."))
            .Append("</p>\n</section>\n");
    }

    private static void WriteVerification(StringBuilder html, StudyDetail study, AnalysisSnapshotDto snapshot)
    {
        var verified = snapshot.Candidates.Where(c => c.Verification?.Responses is { Count: > 0 }).OrderBy(c => c.Rank).ToList();
        if (verified.Count == 0) return;
        html.Append("<section id=\"verification\">\n<h2>Verification runs</h2>\n<div class=\"scroll\"><table>\n<thead><tr><th>Candidate</th><th>Run</th><th>Response</th><th>Predicted</th><th>Observed</th><th>Error</th><th>Cross-validated RMSE</th><th>Within it</th></tr></thead>\n<tbody>\n");
        foreach (var c in verified)
        {
            foreach (var v in c.Verification!.Responses!)
            {
                var unit = study.Responses.FirstOrDefault(r => r.Name == v.Response)?.Unit;
                html.Append("<tr><th>").Append(c.Rank.ToString(CultureInfo.InvariantCulture)).Append("</th><td>")
                    .Append(c.Verification.RunNumber.ToString(CultureInfo.InvariantCulture)).Append("</td><td>").Append(E(v.Response))
                    .Append("</td><td class=\"num\">").Append(E(Formats.WithUnit(v.Predicted, unit)))
                    .Append("</td><td class=\"num\">").Append(E(Formats.WithUnit(v.Observed, unit)))
                    .Append("</td><td class=\"num\">").Append(E(Formats.WithUnit(v.Error, unit)))
                    .Append("</td><td class=\"num\">").Append(E(Formats.WithUnit(v.CvRmse, unit)))
                    .Append("</td><td>").Append(v.WithinCvError ? "yes" : "<strong>no</strong>").Append("</td></tr>\n");
            }
        }
        html.Append("</tbody></table></div>\n</section>\n");
    }

    private static void WriteFitCheck(StringBuilder html, StudyDetail study, AnalysisSnapshotDto snapshot)
    {
        html.Append("<section id=\"fit-check\">\n<h2>Fit check</h2>\n<p class=\"muted\">")
            .Append(E("Each done run is predicted by a model fitted without it (cross-validation), so the scores say how well the surrogate predicts designs it has not seen."))
            .Append("</p>\n<div class=\"scroll\"><table>\n<thead><tr><th>Response</th><th>Model</th><th>Cross-validated R²</th><th>Cross-validated RMSE</th><th>NRMSE</th><th>Largest error</th><th>Verdict</th></tr></thead>\n<tbody>\n");
        foreach (var r in snapshot.Responses)
        {
            html.Append("<tr><th>").Append(E(r.Name)).Append("</th>");
            if (r.Model is not { } m)
            {
                html.Append("<td colspan=\"6\">").Append(E(r.Refusal ?? "No model yet.")).Append("</td></tr>\n");
                continue;
            }
            var (css, words) = AnalysisText.FitVerdict(m.CvR2);
            html.Append("<td>").Append(E(AnalysisText.ModelKind(m.Kind))).Append(m.LogResponse ? E(" on ln y") : "")
                .Append("</td><td class=\"num\">").Append(E(Formats.Number(m.CvR2)))
                .Append("</td><td class=\"num\">").Append(E(Formats.WithUnit(m.CvRmse, r.Unit)))
                .Append("</td><td class=\"num\">").Append(E(AnalysisText.Percent(m.Nrmse)))
                .Append("</td><td class=\"num\">").Append(E(Formats.WithUnit(m.MaxAbsError, r.Unit)))
                .Append("</td><td><span class=\"").Append(css).Append("\">").Append(E(words)).Append("</span></td></tr>\n");
        }
        html.Append("</tbody></table></div>\n<div class=\"charts\">\n");
        foreach (var r in snapshot.Responses.Where(r => r.FitCheck is not null))
        {
            html.Append("<figure>").Append(ReportSvg.PredictedVsObserved(r.Name, r.Unit ?? Unit(study, r.Name), r.FitCheck!))
                .Append("<figcaption>").Append(E($"{r.Name}: predicted (cross-validated) against observed")).Append("</figcaption></figure>\n");
        }
        html.Append("</div>\n</section>\n");
    }

    private static void WriteSensitivity(StringBuilder html, AnalysisSnapshotDto snapshot)
    {
        html.Append("<section id=\"sensitivity\">\n<h2>Sensitivity ranking</h2>\n<p class=\"muted\">")
            .Append(E("Sobol' total-effect indices (dark bars, with 95 % intervals in amber): the share of a response's variance a factor accounts for, alone and with others; first-order indices (thin teal bars) count it alone. ↑ raises the response, ↓ lowers it, ↕ either way."))
            .Append("</p>\n<div class=\"charts\">\n");
        foreach (var r in snapshot.Responses.Where(r => r.Sensitivity.Count > 0))
            html.Append("<figure>").Append(ReportSvg.SensitivityBars(r.Name, r.Sensitivity)).Append("<figcaption>").Append(E(r.Name)).Append("</figcaption></figure>\n");
        html.Append("</div>\n</section>\n");
    }

    private static void WriteDefinition(StringBuilder html, StudyDetail study)
    {
        html.Append("<section id=\"definition\">\n<h2>Factors and responses</h2>\n<div class=\"columns\"><table>\n<thead><tr><th>Factor</th><th>Range or levels</th></tr></thead>\n<tbody>\n");
        foreach (var f in study.Factors) html.Append("<tr><th>").Append(E(f.Name)).Append("</th><td>").Append(E(Formats.Range(f))).Append("</td></tr>\n");
        html.Append("</tbody></table>\n<table>\n<thead><tr><th>Response</th><th>Goal</th></tr></thead>\n<tbody>\n");
        foreach (var r in study.Responses) html.Append("<tr><th>").Append(E(r.Name)).Append("</th><td>").Append(E(Formats.Goal(r))).Append("</td></tr>\n");
        html.Append("</tbody></table></div>\n</section>\n");
    }

    private static string? Unit(StudyDetail study, string response) => study.Responses.FirstOrDefault(r => r.Name == response)?.Unit;

    private static string E(string? text) => Html.Encode(text ?? "");

    /// <summary>Encodes markup characters only, so units and signs (±, ≤, °C) stay readable in the file.</summary>
    private static readonly HtmlEncoder Html = HtmlEncoder.Create(UnicodeRanges.All);

    // The look of the pages (ink-blue, warm paper, amber, teal), printable.
    private const string Style = """
        body { margin: 0; background: #f7f5f0; color: #1d2329; font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, "Noto Sans", sans-serif; }
        main { max-width: 1100px; margin: 0 auto; padding: 1.5rem; }
        h1 { color: #16324f; font-size: 1.7rem; margin: 0.2rem 0 0.4rem; }
        h2 { color: #16324f; font-size: 1.15rem; margin: 0 0 0.6rem; }
        h3 { color: #16324f; font-size: 0.98rem; margin: 1rem 0 0.4rem; }
        section { background: #fff; border: 1px solid #dcd7cc; border-radius: 8px; padding: 1rem 1.2rem; margin: 1rem 0; }
        .brand { color: #5f6b76; font-weight: 600; letter-spacing: 0.03em; margin: 0; }
        .lead, .meta, .muted { color: #5f6b76; }
        .caution { border-left: 5px solid #f2b134; background: #fffaf0; }
        .notice { background: #fcebc7; padding: 0.5rem 0.8rem; border-radius: 6px; }
        table { border-collapse: collapse; font-size: 0.9rem; margin: 0.3rem 0; }
        th, td { text-align: left; padding: 0.3rem 0.45rem; border-bottom: 1px solid #ece8df; white-space: nowrap; vertical-align: top; }
        thead th { color: #5f6b76; font-weight: 600; background: #faf9f6; white-space: normal; vertical-align: bottom; }
        td.num { text-align: right; font-variant-numeric: tabular-nums; }
        .scroll { overflow-x: auto; }
        .columns { display: flex; flex-wrap: wrap; gap: 2rem; }
        .charts { display: flex; flex-wrap: wrap; gap: 1rem 2rem; }
        figure { margin: 0; }
        figcaption { color: #5f6b76; font-size: 0.85rem; }
        svg { max-width: 100%; height: auto; font: 11px system-ui, sans-serif; fill: #1d2329; }
        svg .axis { fill: #5f6b76; }
        .badge { display: inline-block; padding: 0 0.45rem; border-radius: 999px; font-size: 0.78rem; }
        .badge-extrapolating { background: #fcebc7; color: #7a5208; }
        .badge-unverified { background: #e6ecf2; color: #3b4d60; }
        .badge-verifying { background: #e6ecf2; color: #16324f; }
        .badge-verified { background: #d5efe9; color: #1c6459; }
        .badge-disagrees { background: #f6d9d2; color: #8a2f1c; }
        .fit-good { color: #1c6459; } .fit-fair { color: #7a5208; } .fit-poor { color: #8a2f1c; font-weight: 600; }
        footer { color: #5f6b76; font-size: 0.8rem; margin-top: 1.5rem; }
        @media print { body { background: #fff; } section { break-inside: avoid; } }
        """;
}
