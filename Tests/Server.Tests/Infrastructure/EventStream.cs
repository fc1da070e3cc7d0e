using System.Diagnostics;
using System.Net;
using System.Text.Json;
using System.Threading.Channels;
using Runfold.Shared.Studies;

namespace Runfold.Server.Tests.Infrastructure;

/// <summary>One block of a server-sent-event stream: an event (name, id, data), a comment, or the retry and id
/// fields alone.</summary>
public sealed record EventBlock(string? Name, string? Id, string? Data, string? Comment, string? Retry)
{
    public StudyLiveEvent? Event => Data is null ? null : JsonSerializer.Deserialize<StudyLiveEvent>(Data, RunfoldJson.Options);
}

/// <summary>A client of GET /api/studies/{id}/events that parses the stream as the HTML living standard describes
/// (fields until a blank line; lines starting with a colon are comments).</summary>
public sealed class EventStream : IAsyncDisposable
{
    private readonly CancellationTokenSource _stop = new();
    private readonly Channel<EventBlock> _blocks = Channel.CreateUnbounded<EventBlock>();
    private readonly List<EventBlock> _received = [];
    private readonly HttpResponseMessage _response;
    private readonly Task _reading;

    private EventStream(HttpResponseMessage response)
    {
        _response = response;
        _reading = Task.Run(ReadAsync);
    }

    /// <summary>Everything received so far, in order.</summary>
    public IReadOnlyList<EventBlock> Received
    {
        get
        {
            lock (_received) return [.. _received];
        }
    }

    public static async Task<EventStream> OpenAsync(HttpClient client, int studyId, string? lastEventId = null)
    {
        ArgumentNullException.ThrowIfNull(client);
        using var request = new HttpRequestMessage(HttpMethod.Get, $"/api/studies/{studyId}/events");
        if (lastEventId is not null) request.Headers.Add("Last-Event-ID", lastEventId);
        var response = await client.SendAsync(request, HttpCompletionOption.ResponseHeadersRead);
        if (response.StatusCode != HttpStatusCode.OK) Assert.Fail($"{(int)response.StatusCode}: {await response.Content.ReadAsStringAsync()}");
        Assert.Equal("text/event-stream", response.Content.Headers.ContentType?.MediaType);
        return new EventStream(response);
    }

    /// <summary>The next block (after those already taken) that matches, within <paramref name="timeout"/>.</summary>
    public async Task<EventBlock> NextAsync(Func<EventBlock, bool> where, TimeSpan? timeout = null, string? what = null)
    {
        ArgumentNullException.ThrowIfNull(where);
        var limit = timeout ?? TimeSpan.FromSeconds(30);
        var clock = Stopwatch.StartNew();
        using var cancel = new CancellationTokenSource(limit);
        try
        {
            while (true)
            {
                var block = await _blocks.Reader.ReadAsync(cancel.Token);
                if (where(block)) return block;
            }
        }
        catch (OperationCanceledException)
        {
            Assert.Fail($"No {what ?? "matching block"} on the event stream within {clock.Elapsed.TotalSeconds:0.0} s; received: "
                        + string.Join(" | ", Received.Select(b => b.Comment ?? $"{b.Name} {b.Id} {b.Data}")));
            throw;
        }
    }

    private async Task ReadAsync()
    {
        try
        {
            await using var body = await _response.Content.ReadAsStreamAsync(_stop.Token);
            using var reader = new StreamReader(body);
            string? name = null, id = null, data = null, comment = null, retry = null;
            while (await reader.ReadLineAsync(_stop.Token) is { } line)
            {
                if (line.Length == 0)
                {
                    if (name is not null || id is not null || data is not null || comment is not null || retry is not null)
                        Add(new EventBlock(name, id, data, comment, retry));
                    name = id = data = comment = retry = null;
                    continue;
                }
                if (line[0] == ':')
                {
                    comment = line[1..].Trim();
                    continue;
                }
                var colon = line.IndexOf(':', StringComparison.Ordinal);
                var field = colon < 0 ? line : line[..colon];
                var value = colon < 0 ? "" : line[(colon + 1)..].TrimStart(' ');
                switch (field)
                {
                    case "event": name = value; break;
                    case "id": id = value; break;
                    case "data": data = data is null ? value : data + "\n" + value; break;
                    case "retry": retry = value; break;
                }
            }
        }
        catch (Exception e) when (e is OperationCanceledException or IOException or ObjectDisposedException or HttpRequestException)
        {
            // The test closed the stream, or the server stopped.
        }
        finally
        {
            _blocks.Writer.TryComplete();
        }
    }

    private void Add(EventBlock block)
    {
        lock (_received) _received.Add(block);
        _blocks.Writer.TryWrite(block);
    }

    public async ValueTask DisposeAsync()
    {
        await _stop.CancelAsync();
        _response.Dispose();
        await _reading;
        _stop.Dispose();
    }
}
