using Npgsql;
using Runfold.Server.Hosting;

namespace Runfold.Server.Analysis;

/// <summary>Which server instance works a study's analysis: exactly one at a time.</summary>
public interface IAnalysisLocks
{
    /// <summary>True when this instance now holds (or already held) the study's lock.</summary>
    ValueTask<bool> TryAcquireAsync(int studyId, CancellationToken cancellationToken);

    /// <summary>True while the lock is still held (a dropped lock connection loses every lock).</summary>
    ValueTask<bool> StillHeldAsync(int studyId, CancellationToken cancellationToken);

    ValueTask ReleaseAsync(int studyId, CancellationToken cancellationToken);
}

/// <summary>The embedded store serves one process: it works every study itself.</summary>
public sealed class InProcessAnalysisLocks : IAnalysisLocks
{
    public ValueTask<bool> TryAcquireAsync(int studyId, CancellationToken cancellationToken) => ValueTask.FromResult(true);

    public ValueTask<bool> StillHeldAsync(int studyId, CancellationToken cancellationToken) => ValueTask.FromResult(true);

    public ValueTask ReleaseAsync(int studyId, CancellationToken cancellationToken) => ValueTask.CompletedTask;
}

/// <summary>
/// Session-level advisory locks (<c>pg_try_advisory_lock(class, study)</c>) on one dedicated connection of this
/// instance: the instance that holds a study's lock is the only one that refits it. Locks live as long as the
/// connection, so an instance that stops or loses its connection frees its studies for the others at once.
/// </summary>
public sealed partial class PostgresAnalysisLocks(RunfoldSettings settings, ILogger<PostgresAnalysisLocks> logger) : IAnalysisLocks, IAsyncDisposable
{
    /// <summary>The first key of Runfold's analysis locks ("RFAN"); the second is the study id.</summary>
    public const int LockClass = 0x5246_414E;

    /// <summary>The application name of the lock connection (pg_stat_activity).</summary>
    public const string ConnectionName = "runfold-analysis-locks";

    private readonly SemaphoreSlim _gate = new(1, 1);
    private readonly HashSet<int> _held = [];
    private NpgsqlConnection? _connection;

    public ValueTask<bool> TryAcquireAsync(int studyId, CancellationToken cancellationToken) => SeriallyAsync(async () =>
    {
        var connection = await ConnectionAsync(cancellationToken);
        if (_held.Contains(studyId)) return true;
        await using var command = new NpgsqlCommand("SELECT pg_try_advisory_lock($1, $2)", connection)
        {
            Parameters = { new() { Value = LockClass }, new() { Value = studyId } },
        };
        var acquired = (bool)(await command.ExecuteScalarAsync(cancellationToken))!;
        if (acquired) _held.Add(studyId);
        return acquired;
    }, cancellationToken);

    public ValueTask<bool> StillHeldAsync(int studyId, CancellationToken cancellationToken) => SeriallyAsync(async () =>
    {
        if (_connection is null || !_held.Contains(studyId)) return false;
        await using var command = new NpgsqlCommand(
            "SELECT EXISTS (SELECT 1 FROM pg_locks WHERE locktype = 'advisory' AND classid = $1::oid AND objid = $2::oid AND objsubid = 2 AND pid = pg_backend_pid() AND granted)",
            _connection)
        {
            Parameters = { new() { Value = (long)LockClass }, new() { Value = (long)studyId } },
        };
        var held = (bool)(await command.ExecuteScalarAsync(cancellationToken))!;
        if (!held) _held.Remove(studyId);
        return held;
    }, cancellationToken);

    public async ValueTask ReleaseAsync(int studyId, CancellationToken cancellationToken) => await SeriallyAsync(async () =>
    {
        if (_connection is null || !_held.Remove(studyId)) return false;
        await using var command = new NpgsqlCommand("SELECT pg_advisory_unlock($1, $2)", _connection)
        {
            Parameters = { new() { Value = LockClass }, new() { Value = studyId } },
        };
        return (bool)(await command.ExecuteScalarAsync(cancellationToken))!;
    }, cancellationToken);

    public async ValueTask DisposeAsync()
    {
        if (_connection is not null) await _connection.DisposeAsync();
        _gate.Dispose();
    }

    /// <summary>One command at a time on the one connection; a failed connection drops every lock (false).</summary>
    private async ValueTask<bool> SeriallyAsync(Func<Task<bool>> action, CancellationToken cancellationToken)
    {
        await _gate.WaitAsync(cancellationToken);
        try
        {
            return await action();
        }
        catch (Exception e) when (e is NpgsqlException or IOException or TimeoutException)
        {
            Drop(e);
            return false;
        }
        finally
        {
            _gate.Release();
        }
    }

    private async Task<NpgsqlConnection> ConnectionAsync(CancellationToken cancellationToken)
    {
        if (_connection is { State: System.Data.ConnectionState.Open }) return _connection;
        if (_connection is not null) Drop(null);
        var connection = new NpgsqlConnection(new NpgsqlConnectionStringBuilder(settings.PostgresConnectionString)
        {
            Pooling = false,
            KeepAlive = 30,
            ApplicationName = ConnectionName,
        }.ConnectionString);
        await connection.OpenAsync(cancellationToken);
        _connection = connection;
        return connection;
    }

    /// <summary>The connection is gone, and with it every lock it held.</summary>
    private void Drop(Exception? cause)
    {
        if (_held.Count > 0) Log.LocksLost(logger, _held.Count, cause);
        _held.Clear();
        _connection?.Dispose();
        _connection = null;
    }

    private static partial class Log
    {
        [LoggerMessage(Level = LogLevel.Warning, Message = "The analysis lock connection dropped; {Count} studies are free for any server instance")]
        public static partial void LocksLost(ILogger logger, int count, Exception? exception);
    }
}
