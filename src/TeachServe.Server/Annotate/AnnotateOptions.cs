using Microsoft.Extensions.Options;

namespace TeachServe.Server.Annotate;

/// <summary>Settings of the annotator page, bound from <c>TeachServe:Annotate</c>.</summary>
public sealed class AnnotateOptions
{
    public const string Section = "TeachServe:Annotate";

    /// <summary>
    /// Origins (scheme://host[:port]) of platform pages allowed to show the annotator page in an iframe; they go into
    /// <c>Content-Security-Policy: frame-ancestors</c> and are the only targets of the page's <c>postMessage</c> events.
    /// Empty: the page can only be framed by TeachServe's own origin.
    /// </summary>
    public List<string> FrameAncestors { get; set; } = [];

    /// <summary>How long the one-time code in a launch link can be exchanged for the session token.</summary>
    public TimeSpan LaunchCodeLifetime { get; set; } = TimeSpan.FromHours(1);
}

public sealed class AnnotateOptionsValidator : IValidateOptions<AnnotateOptions>
{
    public ValidateOptionsResult Validate(string? name, AnnotateOptions o)
    {
        var failures = new List<string>();
        foreach (var origin in o.FrameAncestors)
        {
            if (!IsOrigin(origin))
                failures.Add($"{AnnotateOptions.Section}:FrameAncestors: '{origin}' is not an origin such as https://labels.example.org (scheme, host and optional port, no path).");
        }
        if (o.LaunchCodeLifetime <= TimeSpan.Zero || o.LaunchCodeLifetime > TimeSpan.FromDays(7))
            failures.Add($"{AnnotateOptions.Section}:LaunchCodeLifetime must be positive and at most 7 days, e.g. \"01:00:00\".");
        return failures.Count == 0 ? ValidateOptionsResult.Success : ValidateOptionsResult.Fail(failures);
    }

    /// <summary>An origin exactly as a browser serialises it: no path, query, fragment, user info or trailing slash.</summary>
    public static bool IsOrigin(string value) =>
        Uri.TryCreate(value, UriKind.Absolute, out var uri)
        && uri.Scheme is "http" or "https"
        && string.IsNullOrEmpty(uri.UserInfo)
        && uri.GetLeftPart(UriPartial.Authority).Equals(value, StringComparison.OrdinalIgnoreCase);
}
