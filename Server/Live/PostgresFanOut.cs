using System.Text.Json;
using System.Text.Json.Serialization;
using System.Threading.Channels;
using Microsoft.EntityFrameworkCore;
using Npgsql;
using Runfold.Server.Data;
using Runfold.Server.Studies;
using Runfold.Shared.Studies;

namespace Runfold.Server.Live;

/// <summary>One message between server instances: a committed study change, or a live event of the analysis.</summary>
internal sealed record PeerMessage(string Origin, StudyChange? Change, StudyLiveEvent? Live);

/// <summary>
/// Carries study changes and the analysis' live events between the server instances on one PostgreSQL database
/// with <c>LISTEN</c>/<c>NOTIFY</c>: what this instance commits or computes is sent on <see cref="Channel"/> after
/// the commit, and what the others send is delivered to this instance's pages and streams. The listening
/// connection is its own (not pooled) and checked every <see cref="LiveOptions.ListenerCheck"/>; when it drops it
/// is opened again with back-off, and the pages and streams of this instance are then told to re-read, since
/// notifications sent meanwhile are lost.
/// </summary>
public sealed partial class PostgresFanOut : BackgroundService
{
    public const string Channel = "runfold_live";

    /// <summary>The application name of the listening connection (pg_stat_activity).</summary>
    public const string ListenerName = "runfold-live-listener";

    private static readonly JsonSerializerOptions Json = new(RunfoldJson.Options) { Converters = { new JsonStringEnumConverter(JsonNamingPolicy.CamelCase) } };

    private readonly string _origin = Guid.NewGuid().ToString("N");
    private readonly Channel<PeerMessage> _outbox = System.Threading.Channels.Channel.CreateUnbounded<PeerMessage>(new UnboundedChannelOptions { SingleReader = true });
    private readonly NpgsqlDataSource _dataSource;
    private readonly string _listenConnectionString;
    private readonly StudyChangeHub _changes;
    private readonly StudyLiveHub _live;
    private readonly IDbContextFactory<RunfoldDbContext> _contexts;
    private readonly LiveOptions _options;
    private readonly ILogger<PostgresFanOut> _logger;
    private readonly TaskCompletionSource _listening = new(TaskCreationOptions.RunContinuationsAsynchronously);

    public PostgresFanOut(NpgsqlDataSource dataSource, Hosting.RunfoldSettings settings, StudyChangeHub changes, StudyLiveHub live,
        IDbContextFactory<RunfoldDbContext> contexts, LiveOptions options, ILogger<PostgresFanOut> logger)
    {
        ArgumentNullException.ThrowIfNull(settings);
        _dataSource = dataSource;
        _listenConnectionString = new NpgsqlConnectionStringBuilder(settings.PostgresConnectionString)
        {
            Pooling = false,
            KeepAlive = 30,
            ApplicationName = ListenerName,
        }.ConnectionString;
        _changes = changes;
        _live = live;
        _contexts = contexts;
        _options = options;
        _logger = logger;
        _changes.Changed += OnLocalChange;
        _live.Published += OnLocalEvent;
    }

    /// <summary>How many times the listening connection was opened again after it dropped.</summary>
    public int Reconnects { get; private set; }

    /// <summary>Completes once the first <c>LISTEN</c> is in place.</summary>
    public Task Listening => _listening.Task;

    public override void Dispose()
    {
        _changes.Changed -= OnLocalChange;
        _live.Published -= OnLocalEvent;
        base.Dispose();
    }

    protected override Task ExecuteAsync(CancellationToken stoppingToken) =>
        Task.WhenAll(SendAsync(stoppingToken), ListenAsync(stoppingToken));

    private void OnLocalChange(StudyChange change) => _outbox.Writer.TryWrite(new PeerMessage(_origin, change, null));

    private void OnLocalEvent(StudyLiveEvent liveEvent) => _outbox.Writer.TryWrite(new PeerMessage(_origin, null, liveEvent));

    /// <summary>Sends queued messages in order, a batch of NOTIFYs per round trip.</summary>
    private async Task SendAsync(CancellationToken stoppingToken)
    {
        var reader = _outbox.Reader;
        var batch = new List<PeerMessage>();
        try
        {
            while (await reader.WaitToReadAsync(stoppingToken))
            {
                batch.Clear();
                while (batch.Count < 100 && reader.TryRead(out var message)) batch.Add(message);
                try
                {
                    await using var connection = await _dataSource.OpenConnectionAsync(stoppingToken);
                    await using var notify = new NpgsqlBatch(connection);
                    foreach (var message in batch)
                        notify.BatchCommands.Add(new NpgsqlBatchCommand("SELECT pg_notify($1, $2)")
                        {
                            Parameters = { new() { Value = Channel }, new() { Value = JsonSerializer.Serialize(message, Json) } },
                        });
                    await notify.ExecuteNonQueryAsync(stoppingToken);
                }
                catch (Exception e) when (e is NpgsqlException or InvalidOperationException or TimeoutException)
                {
                    // The other instances miss these; their periodic analysis sweep and their pages' next change heal it.
                    Log.SendFailed(_logger, batch.Count, e);
                }
            }
        }
        catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
        {
        }
    }

    private async Task ListenAsync(CancellationToken stoppingToken)
    {
        var delay = TimeSpan.FromMilliseconds(200);
        var opened = false;
        while (!stoppingToken.IsCancellationRequested)
        {
            try
            {
                await using var connection = new NpgsqlConnection(_listenConnectionString);
                await connection.OpenAsync(stoppingToken);
                connection.Notification += OnNotification;
                await using (var listen = new NpgsqlCommand($"LISTEN {Channel}", connection))
                    await listen.ExecuteNonQueryAsync(stoppingToken);
                if (opened)
                {
                    Reconnects++;
                    Log.Reconnected(_logger);
                    await ResyncAsync(stoppingToken);
                }
                opened = true;
                delay = TimeSpan.FromMilliseconds(200);
                _listening.TrySetResult();
                while (!stoppingToken.IsCancellationRequested)
                {
                    if (await connection.WaitAsync(_options.ListenerCheck, stoppingToken)) continue;
                    // Quiet for a while: make sure the connection is still there.
                    await using var ping = new NpgsqlCommand("SELECT 1", connection);
                    await ping.ExecuteScalarAsync(stoppingToken);
                }
            }
            catch (OperationCanceledException) when (stoppingToken.IsCancellationRequested)
            {
                return;
            }
            catch (Exception e) when (e is NpgsqlException or InvalidOperationException or IOException or TimeoutException)
            {
                Log.ListenFailed(_logger, delay.TotalSeconds, e);
                try { await Task.Delay(delay, stoppingToken); }
                catch (OperationCanceledException) { return; }
                delay = TimeSpan.FromTicks(Math.Min(delay.Ticks * 2, TimeSpan.FromSeconds(10).Ticks));
            }
        }
    }

    private void OnNotification(object sender, NpgsqlNotificationEventArgs args)
    {
        PeerMessage? message;
        try
        {
            message = JsonSerializer.Deserialize<PeerMessage>(args.Payload, Json);
        }
        catch (JsonException e)
        {
            Log.Unreadable(_logger, e);
            return;
        }
        if (message is null || message.Origin == _origin) return; // this instance told its own already
        if (message.Change is { } change) _changes.Deliver(change);
        if (message.Live is { } liveEvent) _live.Deliver(liveEvent);
    }

    /// <summary>After a gap in listening: every study a page or stream of this instance follows is told its
    /// current result-set version and latest snapshot, so they re-read what they may have missed.</summary>
    private async Task ResyncAsync(CancellationToken cancellationToken)
    {
        var studies = _changes.WatchedStudies.Union(_live.FollowedStudies).ToList();
        if (studies.Count == 0) return;
        await using var db = await _contexts.CreateDbContextAsync(cancellationToken);
        var current = await db.Studies.AsNoTracking().Where(s => studies.Contains(s.Id))
            .Select(s => new
            {
                s.Id,
                s.ResultSetVersion,
                Snapshot = db.AnalysisSnapshots.Where(a => a.StudyId == s.Id).OrderByDescending(a => a.Version)
                    .Select(a => new { a.Version, a.ResultSetVersion }).FirstOrDefault(),
            })
            .ToListAsync(cancellationToken);
        foreach (var study in current)
        {
            _changes.Deliver(new StudyChange(study.Id, StudyChangeKind.Results, study.ResultSetVersion));
            if (study.Snapshot is { } snapshot)
                _live.Deliver(new StudyLiveEvent(study.Id, StudyLiveEventKind.Snapshot, snapshot.ResultSetVersion, snapshot.Version));
        }
    }

    private static partial class Log
    {
        [LoggerMessage(Level = LogLevel.Warning, Message = "{Count} live messages could not be sent to the other server instances")]
        public static partial void SendFailed(ILogger logger, int count, Exception exception);

        [LoggerMessage(Level = LogLevel.Warning, Message = "Listening for the other server instances failed; trying again in {Seconds} s")]
        public static partial void ListenFailed(ILogger logger, double seconds, Exception exception);

        [LoggerMessage(Level = LogLevel.Information, Message = "Listening for the other server instances again")]
        public static partial void Reconnected(ILogger logger);

        [LoggerMessage(Level = LogLevel.Warning, Message = "A live message from another server instance could not be read")]
        public static partial void Unreadable(ILogger logger, Exception exception);
    }
}

/// <summary>Timing of the live fan-out and the event streams.</summary>
public sealed record LiveOptions
{
    /// <summary>How long the listening connection may be quiet before it is checked with a query.</summary>
    public TimeSpan ListenerCheck { get; init; } = TimeSpan.FromSeconds(30);

    /// <summary>Comment lines on an idle event stream, so proxies keep it open and clients notice a dead one.</summary>
    public TimeSpan Heartbeat { get; init; } = TimeSpan.FromSeconds(15);

    /// <summary>The reconnection delay the event stream suggests to clients.</summary>
    public TimeSpan Retry { get; init; } = TimeSpan.FromSeconds(2);
}
