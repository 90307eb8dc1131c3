namespace TeachServe.Server.Infrastructure;

/// <summary>
/// Headers on every response, errors included: no content sniffing, no referrer (launch links and API paths
/// carry ids), and a content security policy. API responses get the strictest policy (nothing may load, nothing
/// may frame them); HTML pages may load only their own scripts and styles, and may be framed, because platforms
/// embed the annotator page. A page that sets its own policy keeps it.
/// </summary>
public static class SecurityHeaders
{
    public const string ApiPolicy = "default-src 'none'; frame-ancestors 'none'; base-uri 'none'; form-action 'none'";
    public const string PagePolicy = "default-src 'self'; img-src 'self' data: https:; object-src 'none'; base-uri 'none'; form-action 'self'";

    public static IApplicationBuilder UseSecurityHeaders(this IApplicationBuilder app) => app.Use((http, next) =>
    {
        http.Response.OnStarting(static state =>
        {
            var response = ((HttpContext)state).Response;
            var headers = response.Headers;
            headers.XContentTypeOptions = "nosniff";
            headers["Referrer-Policy"] = "no-referrer";
            if (headers.ContentSecurityPolicy.Count == 0)
            {
                var html = response.ContentType?.StartsWith("text/html", StringComparison.OrdinalIgnoreCase) == true;
                headers.ContentSecurityPolicy = html ? PagePolicy : ApiPolicy;
            }
            return Task.CompletedTask;
        }, http);
        return next(http);
    });
}
