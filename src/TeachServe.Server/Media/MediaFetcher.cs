using System.Net;
using System.Net.Http.Headers;
using Microsoft.Extensions.Options;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.Media;

/// <summary>An image fetched for an annotator: its bytes and its media type (image/*, never SVG).</summary>
public sealed record FetchedImage(byte[] Bytes, string MediaType);

/// <summary>Why an image could not be served.</summary>
public enum MediaFailure
{
    /// <summary>The address resolves to this host or a private network, and the operator does not allow those.</summary>
    Refused,
    /// <summary>No answer in time.</summary>
    TimedOut,
    /// <summary>An error status, a redirect, a connection failure, a body over the cap, or not an image.</summary>
    Unusable,
}

/// <summary>What a fetch gave: the image, or why there is none (an expected outcome, returned rather than thrown).</summary>
public readonly record struct MediaFetch(FetchedImage? Image, MediaFailure? Failure)
{
    public static implicit operator MediaFetch(FetchedImage image) => new(image, null);

    public static implicit operator MediaFetch(MediaFailure failure) => new(null, failure);
}

/// <summary>
/// Fetches the owner's image for a test item through the guarded client (<see cref="NetworkGuard"/>): short connect
/// and total timeouts, a size cap, raster images only. SVG is refused: served from this origin it could carry script
/// (SVG items have their own sanitised path).
/// </summary>
public sealed partial class MediaFetcher(IHttpClientFactory clients, IOptions<TeachServeOptions> options, TimeProvider time, ILogger<MediaFetcher> logger)
{
    public const string HttpClientName = "media";

    public async Task<MediaFetch> FetchAsync(string url, CancellationToken ct)
    {
        var settings = options.Value.Media;
        using var deadline = new CancellationTokenSource(settings.Timeout, time);
        using var linked = CancellationTokenSource.CreateLinkedTokenSource(ct, deadline.Token);
        var host = Uri.TryCreate(url, UriKind.Absolute, out var uri) ? uri.Host : "?";
        try
        {
            using var request = new HttpRequestMessage(HttpMethod.Get, uri);
            request.Headers.Accept.Add(new MediaTypeWithQualityHeaderValue("image/*"));
            using var response = await clients.CreateClient(HttpClientName).SendAsync(request, HttpCompletionOption.ResponseHeadersRead, linked.Token);
            if (response.StatusCode != HttpStatusCode.OK) return Unusable(host, $"status {(int)response.StatusCode}");
            var mediaType = response.Content.Headers.ContentType?.MediaType?.ToLowerInvariant();
            if (mediaType is null || !mediaType.StartsWith("image/", StringComparison.Ordinal) || mediaType.Contains("svg", StringComparison.Ordinal))
                return Unusable(host, $"content type '{mediaType}'");
            if (response.Content.Headers.ContentLength > settings.MaxBytes) return Unusable(host, $"{response.Content.Headers.ContentLength} bytes");
            await using var body = await response.Content.ReadAsStreamAsync(linked.Token);
            using var copy = new MemoryStream();
            var buffer = new byte[81920];
            int read;
            while ((read = await body.ReadAsync(buffer, linked.Token)) > 0)
            {
                copy.Write(buffer, 0, read);
                if (copy.Length > settings.MaxBytes) return Unusable(host, $"more than {settings.MaxBytes} bytes");
            }
            return new FetchedImage(copy.ToArray(), mediaType);
        }
        catch (HttpRequestException e) when (RefusedAddressException.In(e) is { } refused)
        {
            LogRefused(logger, refused.Host, refused.Message);
            return MediaFailure.Refused;
        }
        catch (OperationCanceledException) when (!ct.IsCancellationRequested)
        {
            LogFailed(logger, host, "no answer in time");
            return MediaFailure.TimedOut;
        }
        catch (HttpRequestException e)
        {
            return Unusable(host, e.Message);
        }
    }

    private MediaFailure Unusable(string host, string reason)
    {
        LogFailed(logger, host, reason);
        return MediaFailure.Unusable;
    }

    [LoggerMessage(Level = LogLevel.Warning, Message = "Refused to fetch an item image from {Host}: {Reason} (TeachServe:Media:AllowPrivateNetworks)")]
    private static partial void LogRefused(ILogger logger, string host, string reason);

    [LoggerMessage(Level = LogLevel.Warning, Message = "Could not fetch an item image from {Host}: {Reason}")]
    private static partial void LogFailed(ILogger logger, string host, string reason);
}
