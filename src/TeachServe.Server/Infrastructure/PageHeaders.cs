namespace TeachServe.Server.Infrastructure;

/// <summary>Security headers of the HTML pages (the JSON API needs none of these).</summary>
public static class PageHeaders
{
    /// <summary>
    /// No referrer ever leaves a page, so nothing in its address can reach another server; no plug-ins, no inline
    /// script or style, requests only to this server (item images may come from anywhere), and framing only by
    /// <paramref name="frameAncestors"/>.
    /// </summary>
    public static void Apply(HttpResponse response, string frameAncestors, bool externalImages, string formAction = "'self'")
    {
        var images = externalImages ? "'self' data: https: http:" : "'self' data:";
        response.Headers.ContentSecurityPolicy =
            $"default-src 'none'; script-src 'self'; style-src 'self'; img-src {images}; connect-src 'self'; " +
            $"base-uri 'none'; form-action {formAction}; frame-ancestors {frameAncestors}";
        response.Headers["Referrer-Policy"] = "no-referrer";
        response.Headers.XContentTypeOptions = "nosniff";
        response.Headers.CacheControl = "no-store";
        response.Headers["Cross-Origin-Opener-Policy"] = "same-origin-allow-popups";
        if (frameAncestors == "'none'") response.Headers.XFrameOptions = "DENY";
    }
}
