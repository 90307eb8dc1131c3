using System.Collections.Frozen;
using System.Security.Cryptography;

namespace TeachServe.Server.Infrastructure;

/// <summary>
/// The pages' static files (HTML templates, CSS, ES modules), embedded in the server assembly so a copied binary is
/// complete. Each asset is addressed with its content hash (<c>/assets/annotate.js?v=…</c>), so browsers may cache it
/// for good and still never run a stale copy after an upgrade.
/// </summary>
public static class PageAssets
{
    private const string ResourcePrefix = "TeachServe.Assets.";

    public sealed record Asset(string Name, byte[] Bytes, string ContentType, string Hash);

    private static readonly FrozenDictionary<string, Asset> All = Load();

    public static Asset Get(string name) => All[name];

    public static bool TryGet(string name, out Asset asset) => All.TryGetValue(name, out asset!);

    public static string Text(string name) => System.Text.Encoding.UTF8.GetString(Get(name).Bytes);

    /// <summary>The versioned URL of an asset.</summary>
    public static string Url(string name) => $"/assets/{name}?v={Get(name).Hash}";

    /// <summary>An HTML template with every <c>{{asset.name}}</c> replaced by that asset's versioned URL.</summary>
    public static string Page(string template)
    {
        var html = Text(template);
        foreach (var name in All.Keys) html = html.Replace("{{" + name + "}}", Url(name), StringComparison.Ordinal);
        return html;
    }

    public static IEndpointRouteBuilder MapPageAssets(this IEndpointRouteBuilder app)
    {
        app.MapGet("/assets/{name}", (string name, HttpContext http) =>
        {
            if (!TryGet(name, out var asset) || name.EndsWith(".html", StringComparison.Ordinal)) return Results.NotFound();
            http.Response.Headers.CacheControl = "public, max-age=31536000, immutable";
            http.Response.Headers.XContentTypeOptions = "nosniff";
            return Results.Bytes(asset.Bytes, asset.ContentType);
        }).ExcludeFromDescription();
        return app;
    }

    private static FrozenDictionary<string, Asset> Load()
    {
        var assembly = typeof(PageAssets).Assembly;
        var assets = new Dictionary<string, Asset>(StringComparer.Ordinal);
        foreach (var resource in assembly.GetManifestResourceNames().Where(r => r.StartsWith(ResourcePrefix, StringComparison.Ordinal)))
        {
            using var stream = assembly.GetManifestResourceStream(resource)!;
            using var copy = new MemoryStream();
            stream.CopyTo(copy);
            var bytes = copy.ToArray();
            var name = resource[ResourcePrefix.Length..];
            var type = Path.GetExtension(name) switch
            {
                ".js" => "text/javascript; charset=utf-8",
                ".css" => "text/css; charset=utf-8",
                ".html" => "text/html; charset=utf-8",
                ".svg" => "image/svg+xml",
                _ => "application/octet-stream",
            };
            assets[name] = new Asset(name, bytes, type, Convert.ToHexStringLower(SHA256.HashData(bytes))[..16]);
        }
        return assets.ToFrozenDictionary(StringComparer.Ordinal);
    }
}
