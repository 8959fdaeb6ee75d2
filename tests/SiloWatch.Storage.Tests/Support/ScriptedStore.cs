using System.Collections.Concurrent;
using System.Net;
using System.Text;

namespace SiloWatch.Storage.Tests.Support;

/// <summary>
/// A stand-in for the store's /api/v2/write on a loopback port that answers with the status codes
/// it is given, in order (204 once they run out), and keeps every request it saw.
/// </summary>
public sealed class ScriptedStore : IDisposable
{
    private readonly HttpListener _listener = new();
    private readonly ConcurrentQueue<int> _statuses;
    private readonly Task _loop;

    public ScriptedStore(params int[] statuses)
    {
        _statuses = new ConcurrentQueue<int>(statuses);
        Port = Some.ClosedPort();
        _listener.Prefixes.Add($"http://127.0.0.1:{Port}/");
        _listener.Start();
        _loop = Task.Run(ServeAsync);
    }

    public int Port { get; }

    public string Url => $"http://127.0.0.1:{Port}";

    public ConcurrentQueue<(string PathAndQuery, string? Authorization, string Body, int Status)> Requests { get; } = new();

    public void Dispose()
    {
        _listener.Stop();
        _listener.Close();
        try
        {
            _loop.Wait(TimeSpan.FromSeconds(10));
        }
        catch (AggregateException)
        {
        }
    }

    private async Task ServeAsync()
    {
        while (_listener.IsListening)
        {
            HttpListenerContext context;
            try
            {
                context = await _listener.GetContextAsync();
            }
            catch (Exception ex) when (ex is HttpListenerException or ObjectDisposedException or InvalidOperationException)
            {
                return;
            }

            using var reader = new StreamReader(context.Request.InputStream, Encoding.UTF8);
            var body = await reader.ReadToEndAsync();
            var status = _statuses.TryDequeue(out var s) ? s : 204;
            Requests.Enqueue((context.Request.Url!.PathAndQuery, context.Request.Headers["Authorization"], body, status));
            context.Response.StatusCode = status;
            if (status >= 300)
            {
                var error = Encoding.UTF8.GetBytes("""{"code":"scripted","message":"scripted failure"}""");
                context.Response.ContentType = "application/json";
                await context.Response.OutputStream.WriteAsync(error);
            }

            context.Response.Close();
        }
    }
}
