using Markdig;
using Markdig.Renderers.Html;
using Markdig.Syntax;
using Markdig.Syntax.Inlines;

namespace TeachServe.Server.Annotate;

/// <summary>
/// Renders an owner's Markdown (CommonMark, plus tables and strike-through) to HTML an annotator page can insert
/// as it is: raw HTML in the text is shown as text, an image becomes its description (the page loads nothing the
/// owner points at), and a link keeps its target only for http, https and mailto addresses, opening in a new tab
/// without a referrer. Whatever else the text holds is escaped by the renderer.
/// </summary>
public static class GuidanceMarkdown
{
    private static readonly MarkdownPipeline Pipeline = new MarkdownPipelineBuilder()
        .DisableHtml()
        .UsePipeTables()
        .UseEmphasisExtras()
        .Build();

    public static string ToHtml(string markdown)
    {
        var document = Markdown.Parse(markdown, Pipeline);
        foreach (var link in document.Descendants<LinkInline>().ToList())
        {
            if (link.IsImage || !IsSafeTarget(link.Url))
                Unwrap(link);
            else
                Harden(link);
        }
        foreach (var link in document.Descendants<AutolinkInline>().ToList())
        {
            if (IsSafeTarget(link.IsEmail ? "mailto:" + link.Url : link.Url))
                Harden(link);
            else
                link.ReplaceBy(new LiteralInline(link.Url));
        }
        return document.ToHtml(Pipeline);
    }

    /// <summary>Absolute http or https URLs, and mailto addresses.</summary>
    public static bool IsSafeTarget(string? url) =>
        Uri.TryCreate(url?.Trim(), UriKind.Absolute, out var uri) && uri.Scheme is "http" or "https" or "mailto";

    private static void Harden(Inline link)
    {
        var attributes = link.GetAttributes();
        attributes.AddPropertyIfNotExist("target", "_blank");
        attributes.AddPropertyIfNotExist("rel", "noopener noreferrer nofollow");
    }

    /// <summary>Replaces a link or image by its text (an image's description), so nothing of its target remains.</summary>
    private static void Unwrap(LinkInline link)
    {
        var text = new ContainerInline();
        while (link.FirstChild is { } child)
        {
            child.Remove();
            text.AppendChild(child);
        }
        link.ReplaceBy(text);
    }
}
