using System.Text.Json.Nodes;
using System.Threading.Channels;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Hosting;
using Microsoft.AspNetCore.Hosting.Server;
using Microsoft.AspNetCore.Hosting.Server.Features;
using Microsoft.AspNetCore.Http;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Logging;

namespace TeachServe.Server.Tests;

/// <summary>A real HTTP server on a loopback port that records webhook deliveries and answers with scripted status codes.</summary>
public sealed class HookReceiver : IAsyncDisposable
{
    private readonly WebApplication _app;
    private readonly Channel<Delivery> _deliveries = Channel.CreateUnbounded<Delivery>();
    private readonly Queue<int> _statuses;
    private TaskCompletionSource? _hold;
    private readonly TaskCompletionSource _held = new(TaskCreationOptions.RunContinuationsAsynchronously);

    /// <summary>One request as received: the raw body and the Standard Webhooks headers.</summary>
    public sealed record Delivery(string Body, string? Id, string? Timestamp, string? Signature, string? ContentType, int AnsweredWith)
    {
        /// <summary>The CloudEvent's <c>type</c>.</summary>
        public string? Type => JsonNode.Parse(Body)?["type"]?.GetValue<string>();

        /// <summary>The CloudEvent's <c>data</c>: the session's end.</summary>
        public JsonNode Data => JsonNode.Parse(Body)!["data"]!;
    }

    private HookReceiver(int[] statuses, int port)
    {
        _statuses = new Queue<int>(statuses);
        var builder = WebApplication.CreateSlimBuilder();
        builder.Logging.ClearProviders();
        builder.WebHost.UseUrls($"http://127.0.0.1:{port}");
        _app = builder.Build();
        _app.MapPost("/hook", async (HttpRequest request) =>
        {
            using var reader = new StreamReader(request.Body);
            var body = await reader.ReadToEndAsync();
            int status;
            TaskCompletionSource? hold;
            lock (_statuses)
            {
                status = _statuses.Count > 0 ? _statuses.Dequeue() : 200;
                hold = _hold;
                _hold = null;
            }
            await _deliveries.Writer.WriteAsync(new Delivery(body, request.Headers["webhook-id"], request.Headers["webhook-timestamp"],
                request.Headers["webhook-signature"], request.ContentType, status));
            if (hold is not null)
            {
                _held.TrySetResult();
                await hold.Task;
            }
            return Results.StatusCode(status);
        });
    }

    /// <summary>The secret the tests' projects sign with: <c>whsec_</c> and the base64 of the 32 bytes 1, 2, …, 32.</summary>
    public const string Secret = "whsec_AQIDBAUGBwgJCgsMDQ4PEBESExQVFhcYGRobHB0eHyA=";

    /// <summary>The test project with a release webhook to <paramref name="url"/>.</summary>
    public static JsonObject ProjectWithHook(string url, string secret = Secret, int retakes = 0)
    {
        var project = TestApp.ProjectJson(retakes: retakes);
        project["releaseWebhook"] = new JsonObject { ["url"] = url, ["secret"] = secret };
        return project;
    }

    public string Url { get; private set; } = "";

    /// <summary>
    /// The next delivery is recorded at once but answered only when the returned source is completed (a receiver
    /// that is slow to answer). <see cref="Held"/> completes when that delivery has arrived.
    /// </summary>
    public TaskCompletionSource HoldNext()
    {
        var hold = new TaskCompletionSource(TaskCreationOptions.RunContinuationsAsynchronously);
        lock (_statuses) _hold = hold;
        return hold;
    }

    public Task Held => _held.Task.WaitAsync(TimeSpan.FromSeconds(30));

    /// <summary>A delivery already received and not yet taken by <see cref="NextAsync"/>, if any.</summary>
    public bool TryTake(out Delivery? delivery) => _deliveries.Reader.TryRead(out delivery);

    public static async Task<HookReceiver> StartAsync(int port = 0, params int[] statuses)
    {
        var receiver = new HookReceiver(statuses, port);
        await receiver._app.StartAsync();
        var address = receiver._app.Services.GetRequiredService<IServer>().Features.Get<IServerAddressesFeature>()!.Addresses.First();
        receiver.Url = address.TrimEnd('/') + "/hook";
        return receiver;
    }

    public async Task<Delivery> NextAsync() =>
        await _deliveries.Reader.ReadAsync().AsTask().WaitAsync(TimeSpan.FromSeconds(30));

    public static int FreePort()
    {
        using var listener = new System.Net.Sockets.TcpListener(System.Net.IPAddress.Loopback, 0);
        listener.Start();
        return ((System.Net.IPEndPoint)listener.LocalEndpoint).Port;
    }

    public async ValueTask DisposeAsync() => await _app.DisposeAsync();
}
