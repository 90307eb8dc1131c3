using System.Net;
using IPNetwork = System.Net.IPNetwork;
using Microsoft.AspNetCore.HttpOverrides;
using Microsoft.Extensions.Options;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// <c>X-Forwarded-For</c> from the configured reverse proxies only (<c>TeachServe:ForwardedHeaders:KnownProxies</c>),
/// so that per-address rate limits behind a proxy see each client instead of one shared proxy address. The
/// framework's default trust of loopback is removed: with no proxy configured the header is ignored, and a
/// client can never name its own address. Only the entry the nearest proxy appended is used (ForwardLimit 1), so
/// addresses a client wrote into the header itself are not believed.
/// </summary>
public static class ForwardedHeaderSetup
{
    public static bool TryParse(string text, out IPAddress? address, out IPNetwork? network)
    {
        address = null;
        network = null;
        var trimmed = text.Trim();
        if (trimmed.Contains('/')) return IPNetwork.TryParse(trimmed, out var parsed) && (network = parsed) is not null;
        return IPAddress.TryParse(trimmed, out address);
    }

    public static IServiceCollection AddKnownProxies(this IServiceCollection services)
    {
        services.AddOptions<ForwardedHeadersOptions>().Configure<IOptions<TeachServeOptions>>((forwarded, options) =>
        {
            forwarded.ForwardedHeaders = ForwardedHeaders.XForwardedFor;
            forwarded.ForwardLimit = 1;
            forwarded.KnownProxies.Clear();
            forwarded.KnownIPNetworks.Clear();
            foreach (var proxy in options.Value.ForwardedHeaders.KnownProxies)
            {
                // Invalid entries fail the start in TeachServeOptionsValidator.
                if (!TryParse(proxy, out var address, out var network)) continue;
                if (address is not null) forwarded.KnownProxies.Add(address);
                if (network is { } n) forwarded.KnownIPNetworks.Add(n);
            }
        });
        return services;
    }

    /// <summary>First in the pipeline, so that everything after (rate limits, logs) sees the client's address.</summary>
    public static WebApplication UseKnownProxies(this WebApplication app)
    {
        if (app.Services.GetRequiredService<IOptions<TeachServeOptions>>().Value.ForwardedHeaders.KnownProxies.Count > 0)
            app.UseForwardedHeaders();
        return app;
    }
}
