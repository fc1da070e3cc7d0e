using System.Globalization;
using System.Security.Claims;
using System.Text.Json;
using System.Threading.Channels;
using Microsoft.AspNetCore.Http.Features;
using Microsoft.EntityFrameworkCore;
using Runfold.Server.Auth;
using Runfold.Server.Data;
using Runfold.Server.Hosting;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Live;

public static class LiveApi
{
    /// <summary>The live hub of this instance and, on PostgreSQL, the LISTEN/NOTIFY fan-out between instances.</summary>
    public static IServiceCollection AddLive(this IServiceCollection services, RunfoldSettings settings)
    {
        ArgumentNullException.ThrowIfNull(settings);
        services.AddSingleton(new LiveOptions());
        services.AddSingleton<StudyLiveHub>();
        if (settings.Provider == StorageProvider.Postgres)
        {
            services.AddSingleton<PostgresFanOut>();
            services.AddHostedService(sp => sp.GetRequiredService<PostgresFanOut>());
        }
        return services;
    }

    public static IEndpointRouteBuilder MapStudyEventsApi(this IEndpointRouteBuilder app)
    {
        app.MapGet("/api/studies/{id:int}/events", async (int id, string? lastEventId, HttpContext http, ClaimsPrincipal user,
                    RunfoldDbContext db, CancellationToken ct) =>
                {
                    var (_, failure) = await db.RequireAsync<bool>(Caller.From(user)!, id, StudyRole.Viewer, "follow the study", ct);
                    if (failure is not null) return failure.ToResult();
                    var resumeFrom = http.Request.Headers["Last-Event-ID"].FirstOrDefault() ?? lastEventId;
                    return new StudyEventStream(id, EventCursor.Parse(resumeFrom));
                })
            .RequireAuthorization()
            .WithTags("Live")
            .WithSummary("Server-sent events of the study as they happen: changed (runs or results), snapshot (a new analysis snapshot), progress (a refit's stage and percent). Event ids are <resultSetVersion>-<snapshotVersion>; reconnect with Last-Event-ID (or ?lastEventId=) to get what was missed.")
            .Produces(StatusCodes.Status200OK, contentType: "text/event-stream")
            .ProducesProblem(StatusCodes.Status404NotFound);
        return app;
    }
}

/// <summary>Where a client of the event stream is: the newest result-set version and snapshot version it was told.</summary>
public readonly record struct EventCursor(long ResultSetVersion, int SnapshotVersion)
{
    public override string ToString() => string.Create(CultureInfo.InvariantCulture, $"{ResultSetVersion}-{SnapshotVersion}");

    public static EventCursor? Parse(string? text)
    {
        if (string.IsNullOrWhiteSpace(text)) return null;
        var parts = text.Trim().Split('-');
        return parts.Length == 2
               && long.TryParse(parts[0], NumberStyles.None, CultureInfo.InvariantCulture, out var results)
               && int.TryParse(parts[1], NumberStyles.None, CultureInfo.InvariantCulture, out var snapshot)
            ? new EventCursor(results, snapshot)
            : null;
    }
}

/// <summary>
/// One client's server-sent-event stream of a study. It opens with the reconnection delay and the id of where
/// the client is. A client resuming with Last-Event-ID first gets a <c>changed</c> event (claims carry no version,
/// so a resumed client re-reads the runs) and a <c>snapshot</c> event for every snapshot stored since (the newest
/// 50), then the live events. Comment lines every <see cref="LiveOptions.Heartbeat"/> keep an idle stream open.
/// The stream ends when the client goes or the server stops.
/// </summary>
internal sealed class StudyEventStream(int studyId, EventCursor? resumeFrom) : IResult
{
    private const int MissedSnapshots = 50;

    public async Task ExecuteAsync(HttpContext httpContext)
    {
        var services = httpContext.RequestServices;
        var hub = services.GetRequiredService<StudyLiveHub>();
        var contexts = services.GetRequiredService<IDbContextFactory<RunfoldDbContext>>();
        var options = services.GetRequiredService<LiveOptions>();
        var lifetime = services.GetRequiredService<IHostApplicationLifetime>();
        using var stop = CancellationTokenSource.CreateLinkedTokenSource(httpContext.RequestAborted, lifetime.ApplicationStopping);
        var cancellationToken = stop.Token;

        // Follow first, then read where the study is: nothing falls between the two.
        var events = Channel.CreateBounded<StudyLiveEvent>(new BoundedChannelOptions(1000) { FullMode = BoundedChannelFullMode.DropOldest });
        using var follow = hub.Follow(studyId, e =>
        {
            events.Writer.TryWrite(e);
            return Task.CompletedTask;
        });

        var response = httpContext.Response;
        response.StatusCode = StatusCodes.Status200OK;
        response.ContentType = "text/event-stream";
        response.Headers.CacheControl = "no-cache";
        response.Headers["X-Accel-Buffering"] = "no";
        httpContext.Features.Get<IHttpResponseBodyFeature>()?.DisableBuffering();
        try
        {
            var cursor = await CatchUpAsync(contexts, response, options, cancellationToken);
            await response.WriteAsync($"id: {cursor}\n\n", cancellationToken);
            await response.Body.FlushAsync(cancellationToken);

            Task<bool>? waiting = null;
            Task? heartbeat = null;
            while (!cancellationToken.IsCancellationRequested)
            {
                waiting ??= events.Reader.WaitToReadAsync(cancellationToken).AsTask();
                heartbeat ??= Task.Delay(options.Heartbeat, cancellationToken);
                if (await Task.WhenAny(waiting, heartbeat) == heartbeat)
                {
                    heartbeat = null;
                    await response.WriteAsync(": keep-alive\n\n", cancellationToken);
                    await response.Body.FlushAsync(cancellationToken);
                    continue;
                }
                if (!await waiting) break;
                waiting = null;
                while (events.Reader.TryRead(out var liveEvent))
                    cursor = await WriteAsync(response, cursor, liveEvent, cancellationToken);
                await response.Body.FlushAsync(cancellationToken);
            }
        }
        catch (OperationCanceledException) when (cancellationToken.IsCancellationRequested)
        {
            // The client went away or the server stops.
        }
    }

    /// <summary>The opening of the stream: the reconnection delay, and for a resuming client what it missed.
    /// Returns where the client is now.</summary>
    private async Task<EventCursor> CatchUpAsync(IDbContextFactory<RunfoldDbContext> contexts, HttpResponse response, LiveOptions options,
        CancellationToken cancellationToken)
    {
        await using var db = await contexts.CreateDbContextAsync(cancellationToken);
        var resultSetVersion = await db.Studies.Where(s => s.Id == studyId).Select(s => s.ResultSetVersion).FirstOrDefaultAsync(cancellationToken);
        var snapshotVersion = await db.AnalysisSnapshots.Where(s => s.StudyId == studyId).MaxAsync(s => (int?)s.Version, cancellationToken) ?? 0;
        var cursor = resumeFrom ?? new EventCursor(resultSetVersion, snapshotVersion);
        await response.WriteAsync(string.Create(CultureInfo.InvariantCulture, $"retry: {(int)options.Retry.TotalMilliseconds}\n\n"), cancellationToken);
        if (resumeFrom is null) return cursor;
        cursor = await WriteAsync(response, cursor, new StudyLiveEvent(studyId, StudyLiveEventKind.Changed, Math.Max(resultSetVersion, cursor.ResultSetVersion)), cancellationToken, always: true);
        var missed = await db.AnalysisSnapshots.AsNoTracking().Where(s => s.StudyId == studyId && s.Version > cursor.SnapshotVersion)
            .OrderByDescending(s => s.Version).Take(MissedSnapshots).Select(s => new { s.Version, s.ResultSetVersion })
            .ToListAsync(cancellationToken);
        foreach (var snapshot in missed.OrderBy(s => s.Version))
            cursor = await WriteAsync(response, cursor, new StudyLiveEvent(studyId, StudyLiveEventKind.Snapshot, snapshot.ResultSetVersion, snapshot.Version), cancellationToken);
        return cursor;
    }

    /// <summary>Writes the event unless the client has it already (an older result-set version, a snapshot it
    /// was told of); returns the cursor after it. Progress events carry no id.</summary>
    private static async Task<EventCursor> WriteAsync(HttpResponse response, EventCursor cursor, StudyLiveEvent liveEvent,
        CancellationToken cancellationToken, bool always = false)
    {
        string name;
        switch (liveEvent.Kind)
        {
            case StudyLiveEventKind.Changed:
                if (liveEvent.ResultSetVersion < cursor.ResultSetVersion && !always) return cursor;
                cursor = cursor with { ResultSetVersion = Math.Max(cursor.ResultSetVersion, liveEvent.ResultSetVersion) };
                name = "changed";
                break;
            case StudyLiveEventKind.Snapshot:
                if (liveEvent.SnapshotVersion is not { } version || version <= cursor.SnapshotVersion) return cursor;
                cursor = new EventCursor(Math.Max(cursor.ResultSetVersion, liveEvent.ResultSetVersion), version);
                name = "snapshot";
                break;
            default:
                await response.WriteAsync($"event: progress\ndata: {JsonSerializer.Serialize(liveEvent, RunfoldJson.Options)}\n\n", cancellationToken);
                return cursor;
        }
        await response.WriteAsync($"event: {name}\nid: {cursor}\ndata: {JsonSerializer.Serialize(liveEvent, RunfoldJson.Options)}\n\n", cancellationToken);
        return cursor;
    }
}
