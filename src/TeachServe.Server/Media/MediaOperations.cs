using Microsoft.Extensions.Options;
using TeachServe.Server.Infrastructure;
using TeachServe.Server.Persistence;
using TeachServe.Server.Sessions;
using TeachServe.Server.Sessions.Store;

namespace TeachServe.Server.Media;

/// <summary>
/// Serves test items' images under opaque per-session addresses. The address is the capability: it carries no key (an
/// <c>&lt;img&gt;</c> cannot send one), so it works only while its session is active and not idle past the token's
/// timeout, and only for the test item of the session's current step; anything else is 404 alike.
/// </summary>
public sealed class MediaOperations(
    TeachServeDb db, SessionLoader loader, SessionStateCache states, SessionReads reads, MediaFetcher fetcher,
    TimeProvider time, IOptions<TeachServeOptions> options)
{
    /// <summary>The image of the session's current test item, fetched from its host; problems never name the host's address.</summary>
    public async Task<Outcome<FetchedImage>> ImageAsync(string sessionId, string token, CancellationToken ct)
    {
        if (token.Length != MediaTokens.Length || sessionId.Length > 40) return NoSuchImage();
        string url;
        using (await states.LockAsync(sessionId, ct))
        {
            var session = await reads.SessionAsync(db, sessionId, ct);
            if (session is null || !session.IsActive || time.GetUtcNow() - session.LastSeenAt > options.Value.SessionIdleTimeout)
                return NoSuchImage();
            var (version, run) = await loader.LoadAsync(db, session, ct);
            var item = run.CurrentItem;
            if (item < version.Model.TeachCount || version.Content[item].ImageUrl is not { } imageUrl
                || !MediaTokens.Matches(session.RefKey, session.Step, item, token))
                return NoSuchImage();
            url = imageUrl;
        }

        // The fetch runs outside the session's lock: a slow image host must not hold up the session's answers.
        // The detail never names the owner's address: it may name the item or its label.
        return await fetcher.FetchAsync(url, ct) switch
        {
            { Image: { } image } => image,
            { Failure: MediaFailure.Refused } => Problems.Of(StatusCodes.Status403Forbidden, "Image address refused",
                "The item's image is on an address this server does not fetch from (a loopback or private network)."),
            { Failure: MediaFailure.TimedOut } => Problems.Of(StatusCodes.Status504GatewayTimeout, "Image host timed out",
                "The item's image host did not answer in time."),
            _ => Problems.Of(StatusCodes.Status502BadGateway, "Image unavailable",
                "The item's image could not be fetched as an image within the size limit."),
        };
    }

    /// <summary>
    /// The content the annotator gets for an item: a test item's image address replaced by its opaque per-session
    /// address (absolute, on <paramref name="baseUrl"/>); teaching items, text and SVG unchanged.
    /// </summary>
    public static Core.Projects.ItemContent ForAnnotator(Versions.CompiledVersion version, Session session, int item, string baseUrl)
    {
        var content = version.Content[item];
        if (item < version.Model.TeachCount || content.ImageUrl is null) return content;
        return content with { ImageUrl = baseUrl + MediaTokens.Path(session.Id, MediaTokens.For(session.RefKey, session.Step, item)) };
    }

    private static Microsoft.AspNetCore.Http.HttpResults.ProblemHttpResult NoSuchImage() => Problems.NotFound("No such image.");
}
