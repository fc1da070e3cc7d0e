using System.Net;
using System.Net.Sockets;
using System.Text;

namespace Runfold.Deploy.Tests.Infrastructure;

/// <summary>
/// A loopback HTTP/1.1 relay in front of the server that, once, forwards a result upload (PUT …/result) and lets
/// the server store it, then cuts the connection instead of passing the answer back — the "committed, but the
/// answer was lost" case that only an idempotency key makes safe to retry. Each curl call is one connection.
/// </summary>
public sealed class DroppingProxy : IAsyncDisposable
{
    private readonly TcpListener _listener = new(IPAddress.Loopback, 0);
    private readonly Uri _target;
    private readonly CancellationTokenSource _stop = new();
    private readonly List<string> _uploadKeys = [];
    private int _dropped;

    public DroppingProxy(Uri target)
    {
        _target = target;
        _listener.Start();
        Address = new Uri($"http://127.0.0.1:{((IPEndPoint)_listener.LocalEndpoint).Port}");
        _ = AcceptAsync();
    }

    public Uri Address { get; }

    /// <summary>The Idempotency-Key header of every result upload that passed through, in order.</summary>
    public IReadOnlyList<string> UploadKeys { get { lock (_uploadKeys) return [.. _uploadKeys]; } }

    private async Task AcceptAsync()
    {
        while (!_stop.IsCancellationRequested)
        {
            TcpClient client;
            try { client = await _listener.AcceptTcpClientAsync(_stop.Token); }
            catch (OperationCanceledException) { return; }
            catch (ObjectDisposedException) { return; }
            _ = RelayAsync(client);
        }
    }

    private async Task RelayAsync(TcpClient client)
    {
        using (client)
        using (var upstream = new TcpClient())
        {
            try
            {
                var downstream = client.GetStream();
                var (head, body) = await ReadMessageAsync(downstream);
                if (head is null) return;
                var requestLine = head[..head.IndexOf('\r', StringComparison.Ordinal)];
                var isUpload = requestLine.StartsWith("PUT /api/runs/", StringComparison.Ordinal) && requestLine.Contains("/result", StringComparison.Ordinal);
                if (isUpload) lock (_uploadKeys) _uploadKeys.Add(Header(head, "Idempotency-Key") ?? "");

                await upstream.ConnectAsync(_target.Host, _target.Port);
                var server = upstream.GetStream();
                // One request per connection: ask the server to close after answering.
                var forwarded = head.Replace("\r\n\r\n", "\r\nConnection: close\r\n\r\n", StringComparison.Ordinal);
                await server.WriteAsync(Encoding.Latin1.GetBytes(forwarded));
                await server.WriteAsync(body);
                var answer = new MemoryStream();
                await server.CopyToAsync(answer); // until the server closes
                if (isUpload && Interlocked.CompareExchange(ref _dropped, 1, 0) == 0)
                {
                    client.Client.LingerState = new LingerOption(true, 0);
                    return; // the server stored it; the client sees the connection cut
                }
                await downstream.WriteAsync(answer.ToArray());
            }
            catch (IOException) { /* a side went away */ }
            catch (SocketException) { /* the server is not listening */ }
        }
    }

    private static async Task<(string? Head, byte[] Body)> ReadMessageAsync(NetworkStream stream)
    {
        var buffer = new List<byte>();
        var one = new byte[1];
        while (true)
        {
            if (await stream.ReadAsync(one) == 0) return (null, []);
            buffer.Add(one[0]);
            var n = buffer.Count;
            if (n >= 4 && buffer[n - 4] == '\r' && buffer[n - 3] == '\n' && buffer[n - 2] == '\r' && buffer[n - 1] == '\n') break;
        }
        var head = Encoding.Latin1.GetString([.. buffer]);
        var length = int.TryParse(Header(head, "Content-Length"), out var l) ? l : 0;
        var body = new byte[length];
        await stream.ReadExactlyAsync(body);
        return (head, body);
    }

    private static string? Header(string head, string name) =>
        head.Split("\r\n").Skip(1)
            .Where(line => line.StartsWith(name + ":", StringComparison.OrdinalIgnoreCase))
            .Select(line => line[(name.Length + 1)..].Trim())
            .FirstOrDefault();

    public ValueTask DisposeAsync()
    {
        _stop.Cancel();
        _listener.Stop();
        _stop.Dispose();
        return ValueTask.CompletedTask;
    }
}
