namespace TeachServe.Server.Infrastructure;

/// <summary>
/// <c>GET /</c>: what this server is and where to go (the owner console, the API reference, the OpenAPI document,
/// the probes). Static, no key needed, nothing loaded from elsewhere.
/// </summary>
public static class LandingPage
{
    private const string Html = """
        <!doctype html>
        <html lang="en">
        <head>
        <meta charset="utf-8">
        <meta name="viewport" content="width=device-width, initial-scale=1">
        <title>TeachServe</title>
        <style>
          body { font: 16px/1.5 system-ui, sans-serif; margin: 0; background: #f5f6f8; color: #1b1f27; }
          main { max-width: 44rem; margin: 3rem auto; padding: 0 1.25rem; }
          h1 { margin: 0 0 .25rem; font-size: 1.75rem; }
          .sub { color: #4a5363; margin: 0 0 1.5rem; }
          ul { padding: 0; list-style: none; }
          li { background: #fff; border: 1px solid #d5d9e0; border-radius: 6px; padding: .75rem 1rem; margin: .5rem 0; }
          a { color: #1d56b0; font-weight: 600; }
          .caution { border-left: 4px solid #b7791f; background: #fff8e6; padding: .75rem 1rem; margin-top: 2rem; font-size: .95rem; }
        </style>
        </head>
        <body>
        <main>
          <h1>TeachServe</h1>
          <p class="sub">Onboarding for annotators: teaching items chosen one at a time, and release to live work after a held-out test.</p>
          <ul>
            <li><a href="/console">Owner console</a> — sign in with a project's owner key: sessions, releases, model versions, settings, keys.</li>
            <li><a href="/reference">API reference</a> — every endpoint, its inputs, answers and errors (works offline).</li>
            <li><a href="/openapi/v1.json">OpenAPI document</a> — the same contract, for your own tools.</li>
            <li><a href="/readyz">Readiness</a> and <a href="/healthz">liveness</a> probes.</li>
          </ul>
          <p>Annotators do not start here: the platform starts a session with its embed key and sends the annotator the link it gets back.</p>
          <p class="caution"><strong>Caution.</strong> Passing onboarding shows that an annotator labelled a project's held-out test items
            well enough under its gate. It is not a professional qualification; for safety-critical or medical labelling follow
            local rules and licensed practice.</p>
        </main>
        </body>
        </html>
        """;

    public static IEndpointRouteBuilder MapLandingPage(this IEndpointRouteBuilder app)
    {
        app.MapGet("/", (HttpContext http) =>
        {
            http.Response.Headers.ContentSecurityPolicy = "default-src 'none'; style-src 'unsafe-inline'; base-uri 'none'; form-action 'none'";
            return Results.Content(Html, "text/html; charset=utf-8");
        }).ExcludeFromDescription().DisableRateLimiting();
        return app;
    }
}
