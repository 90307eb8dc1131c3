using System.Globalization;
using System.Text;
using System.Text.Encodings.Web;
using TeachServe.Server.Infrastructure;

namespace TeachServe.Server.OwnerConsole;

/// <summary>
/// Server-rendered HTML for the console. Every value from the database goes through <see cref="E"/>; markup is only
/// ever written as literals here and in <see cref="ConsolePages"/>.
/// </summary>
public static class ConsoleHtml
{
    public const string Caution =
        "Passing onboarding shows that an annotator labelled this project's held-out test items well enough under your gate. " +
        "It is not a professional qualification. For safety-critical or medical labelling, follow local rules and licensed " +
        "practice: who may label, who reviews, and what supervision is required.";

    public static string E(string? text) => HtmlEncoder.Default.Encode(text ?? "");

    public static string N(double value, string format = "0.###") => value.ToString(format, CultureInfo.InvariantCulture);

    public static string Pct(double? value) => value is { } v ? (v * 100).ToString(v < 0.1 ? "0.0" : "0", CultureInfo.InvariantCulture) + " %" : "–";

    public static string Duration(TimeSpan? span) => span switch
    {
        null => "–",
        { TotalMinutes: < 1 } s => $"{Math.Max(1, (int)s.TotalSeconds)} s",
        { TotalHours: < 1 } s => $"{(int)s.TotalMinutes} min",
        { } s => $"{(int)s.TotalHours} h {s.Minutes} min",
    };

    public static string When(DateTimeOffset at) => at.UtcDateTime.ToString("yyyy-MM-dd HH:mm 'UTC'", CultureInfo.InvariantCulture);

    /// <summary>The page frame: header with navigation, the body, the caution panel, and the footer.</summary>
    public static string Layout(string title, string? projectName, string? active, string formToken, string body)
    {
        var html = new StringBuilder();
        html.Append($"""
            <!doctype html>
            <html lang="en">
            <head>
            <meta charset="utf-8">
            <meta name="viewport" content="width=device-width, initial-scale=1">
            <meta name="referrer" content="no-referrer">
            <title>{E(title)} · TeachServe console</title>
            <link rel="stylesheet" href="{PageAssets.Url("console.css")}">
            </head>
            <body>
            <header class="top">
              <p class="brand">TeachServe <span>owner console</span></p>
            """);
        if (projectName is not null)
        {
            html.Append($"""
                  <nav aria-label="Console">
                    <a href="/console"{Current(active, "onboarding")}>Onboarding</a>
                    <a href="/console/project"{Current(active, "project")}>Project and items</a>
                  </nav>
                  <form method="post" action="/console/sign-out" class="sign-out">
                    {Token(formToken)}
                    <span class="project-name">{E(projectName)}</span>
                    <button type="submit" class="quiet">Sign out</button>
                  </form>
                """);
        }
        html.Append($"""
            </header>
            <main id="main">
            {body}
            <aside class="caution" aria-labelledby="caution-heading">
              <h2 id="caution-heading">Caution</h2>
              <p>{E(Caution)}</p>
            </aside>
            </main>
            </body>
            </html>
            """);
        return html.ToString();
    }

    public static string Token(string formToken) => $"""<input type="hidden" name="__form" value="{E(formToken)}">""";

    private static string Current(string? active, string name) => active == name ? " aria-current=\"page\"" : "";

    /// <summary>A list of problems (line, field, reason) as a table, or nothing.</summary>
    public static string Problems(string heading, IEnumerable<(int? Line, string Field, string Reason)> problems)
    {
        var list = problems.ToList();
        if (list.Count == 0) return "";
        var rows = string.Concat(list.Select(p =>
            $"<tr><td>{(p.Line is { } l ? l.ToString(CultureInfo.InvariantCulture) : "–")}</td><td><code>{E(p.Field)}</code></td><td>{E(p.Reason)}</td></tr>"));
        return $"""
            <div class="message error" role="alert" tabindex="-1" id="problems">
              <h3>{E(heading)}</h3>
              <table class="problems"><thead><tr><th scope="col">Line</th><th scope="col">Field</th><th scope="col">Problem</th></tr></thead>
              <tbody>{rows}</tbody></table>
            </div>
            """;
    }

    public static string Message(string kind, string text) =>
        $"""<div class="message {kind}" role="{(kind == "error" ? "alert" : "status")}"><p>{E(text)}</p></div>""";
}
