using System.Security.Claims;
using System.Text;
using Microsoft.Extensions.DependencyInjection.Extensions;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Hosting;
using Runfold.Server.Sharing;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Reports;

/// <summary>The study report as a download, for a member (viewer or above) or through a share link.</summary>
public sealed class StudyReports(RunfoldDbContext db, StudyService studies, StoredSnapshots snapshots, ShareLinkService links, TimeProvider time)
{
    public sealed record ReportFile(string FileName, string Html);

    /// <summary>With a share link token the link must work for this study; without one the caller (not null then)
    /// must be a member.</summary>
    public async Task<Outcome<ReportFile>> WriteAsync(Caller? caller, int studyId, string? shareToken, CancellationToken cancellationToken)
    {
        if (!string.IsNullOrEmpty(shareToken))
        {
            var link = await links.CheckAsync(shareToken, studyId, cancellationToken);
            if (!link.IsOk) return link.As<ReportFile>();
        }
        else
        {
            ArgumentNullException.ThrowIfNull(caller);
            var (_, denied) = await db.RequireAsync<ReportFile>(caller, studyId, StudyRole.Viewer, "read the report", cancellationToken);
            if (denied is not null) return denied;
        }
        var study = await studies.LoadDetailAsync(studyId, cancellationToken) with { Members = [] };
        var now = time.GetUtcNow();
        var html = StudyReportWriter.Write(study, await snapshots.LatestAsync(studyId, cancellationToken), now);
        return Outcome<ReportFile>.Ok(new ReportFile(StudyReportWriter.FileName(study, now), html));
    }
}

public static class ReportsApi
{
    public static IServiceCollection AddReports(this IServiceCollection services)
    {
        services.AddScoped<StoredSnapshots>();
        services.AddScoped<StudyReports>();
        // The pages read the analysis through IStudyAnalysis; where the live analysis is not registered, they read
        // the stored snapshots (TryAdd: the live implementation, registered with Add, always wins).
        services.TryAddScoped<IStudyAnalysis, StoredSnapshotAnalysis>();
        return services;
    }

    public static IEndpointRouteBuilder MapReportsApi(this IEndpointRouteBuilder app)
    {
        app.MapGet("/api/studies/{id:int}/report", async (int id, string? link, ClaimsPrincipal user, StudyReports reports, CancellationToken ct) =>
            {
                var caller = Caller.From(user);
                if (caller is null && string.IsNullOrEmpty(link))
                    return OutcomeResults.Problem(StatusCodes.Status401Unauthorized, "Sign-in needed",
                        "Sign in (the sign-in cookie or an API token), or open the report through a share link.");
                return (await reports.WriteAsync(caller, id, link, ct)).ToResult(file =>
                    TypedResults.File(Encoding.UTF8.GetBytes(file.Html), "text/html; charset=utf-8", file.FileName));
            })
            .AllowAnonymous()
            .WithTags("Studies")
            .WithSummary("The study report for managers: one self-contained HTML file (inline CSS and SVG, no scripts) with progress, " +
                         "the top candidates with intervals, fit-check metrics, the sensitivity ranking and the cautions. " +
                         "For members (viewer or above), or for anyone with a working share link: ?link=<token>.")
            .Produces<string>(StatusCodes.Status200OK, "text/html")
            .ProducesProblem(StatusCodes.Status403Forbidden)
            .ProducesProblem(StatusCodes.Status404NotFound);
        return app;
    }
}
