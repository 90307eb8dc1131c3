using System.Collections.Concurrent;
using System.Text;
using Microsoft.AspNetCore.Builder;
using Microsoft.AspNetCore.Hosting;
using Microsoft.AspNetCore.Hosting.Server;
using Microsoft.AspNetCore.Hosting.Server.Features;
using Microsoft.AspNetCore.Http;
using Microsoft.Extensions.DependencyInjection;
using Microsoft.Extensions.Logging;

namespace TeachServe.Server.Tests;

/// <summary>
/// A real HTTP server on a loopback port standing in for an owner's image host. Every path answers with a small
/// PNG-typed body holding the path (so a test can tell which image it got); <see cref="Mode"/> makes it misbehave.
/// </summary>
public sealed class ImageHost : IAsyncDisposable
{
    public enum Behaviour { Image, Large, Html, Svg, Redirect }

    private readonly WebApplication _app;

    private ImageHost()
    {
        var builder = WebApplication.CreateSlimBuilder();
        builder.Logging.ClearProviders();
        builder.WebHost.UseUrls("http://127.0.0.1:0");
        _app = builder.Build();
        _app.MapGet("/{**path}", (HttpRequest request) =>
        {
            var path = request.Path.Value!;
            Requests.Enqueue(path);
            var body = Encoding.UTF8.GetBytes("\x89PNG" + path);
            return Mode switch
            {
                Behaviour.Large => Results.Bytes(new byte[LargeBytes], "image/png"),
                Behaviour.Html => Results.Content("<p>not an image</p>", "text/html"),
                Behaviour.Svg => Results.Content("<svg xmlns='http://www.w3.org/2000/svg'><script>alert(1)</script></svg>", "image/svg+xml"),
                Behaviour.Redirect => Results.Redirect("/redirected.png"),
                _ => Results.Bytes(body, "image/png"),
            };
        });
    }

    public const int LargeBytes = 4096;

    private volatile Behaviour _mode = Behaviour.Image;

    public Behaviour Mode
    {
        get => _mode;
        set => _mode = value;
    }

    /// <summary>Paths requested so far, in order.</summary>
    public ConcurrentQueue<string> Requests { get; } = new();

    /// <summary>scheme://127.0.0.1:port, no trailing slash.</summary>
    public string Origin { get; private set; } = "";

    public static async Task<ImageHost> StartAsync()
    {
        var host = new ImageHost();
        await host._app.StartAsync();
        host.Origin = host._app.Services.GetRequiredService<IServer>().Features.Get<IServerAddressesFeature>()!.Addresses.First().TrimEnd('/');
        return host;
    }

    public static byte[] BodyFor(string path) => Encoding.UTF8.GetBytes("\x89PNG" + path);

    public async ValueTask DisposeAsync() => await _app.DisposeAsync();
}
