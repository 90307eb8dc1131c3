using TeachServe.Server.Annotate;

namespace TeachServe.Server.Tests;

/// <summary>The owner's Markdown becomes HTML an annotator page can insert as it is.</summary>
public sealed class GuidanceMarkdownTests
{
    [Theory]
    [InlineData("<script>alert(1)</script>", "<script")]
    [InlineData("<img src=x onerror=alert(1)>", "<img")]
    [InlineData("<a href=\"https://a.example\">x</a>", "<a href")]
    [InlineData("[x](javascript:alert(1))", "javascript:")]
    [InlineData("[x](JaVaScRiPt:alert(1))", "javascript:")]
    [InlineData("[x][r]\n\n[r]: javascript:alert(1)", "javascript:")]
    [InlineData("<javascript:alert(1)>", "href")]
    [InlineData("[x](data:text/html;base64,PHNjcmlwdD4=)", "data:")]
    [InlineData("![p](https://pictures.example/p.png)", "<img")]
    [InlineData("[x](/relative/path)", "href")]
    [InlineData("<iframe src=\"https://a.example\"></iframe>", "<iframe")]
    public void Nothing_the_text_holds_can_run_load_or_point_off_the_web(string markdown, string absent)
    {
        var html = GuidanceMarkdown.ToHtml(markdown);
        Assert.DoesNotContain(absent, html, StringComparison.OrdinalIgnoreCase);
    }

    [Fact]
    public void Raw_html_is_shown_as_text()
    {
        Assert.Contains("&lt;script&gt;alert(1)&lt;/script&gt;", GuidanceMarkdown.ToHtml("<script>alert(1)</script>"), StringComparison.Ordinal);
    }

    [Fact]
    public void Pictures_and_unsafe_links_keep_their_words()
    {
        Assert.Equal("<p>a remote picture</p>\n", GuidanceMarkdown.ToHtml("![a remote picture](https://pictures.example/p.png)"));
        Assert.Equal("<p>click here</p>\n", GuidanceMarkdown.ToHtml("[click *here*](javascript:alert(1))").Replace("<em>", "", StringComparison.Ordinal).Replace("</em>", "", StringComparison.Ordinal));
    }

    [Theory]
    [InlineData("[guide](https://guide.example/seams)", "https://guide.example/seams")]
    [InlineData("[guide](http://guide.example/)", "http://guide.example/")]
    [InlineData("<https://guide.example/a>", "https://guide.example/a")]
    [InlineData("<help@guide.example>", "mailto:help@guide.example")]
    public void Web_and_mail_links_stay_and_open_apart_without_a_referrer(string markdown, string href)
    {
        var html = GuidanceMarkdown.ToHtml(markdown);
        Assert.Contains($"href=\"{href}\"", html, StringComparison.Ordinal);
        Assert.Contains("target=\"_blank\"", html, StringComparison.Ordinal);
        Assert.Contains("rel=\"noopener noreferrer nofollow\"", html, StringComparison.Ordinal);
    }

    [Fact]
    public void Common_markdown_renders()
    {
        // CommonMark 0.31.2 spec, examples of emphasis, lists and headings (the forms owners write most).
        var html = GuidanceMarkdown.ToHtml("## Rules\n\n**bold** and *italic*\n\n1. one\n2. two\n\n- a\n- b\n\n| a | b |\n|---|---|\n| 1 | 2 |\n");
        Assert.Contains("<h2>Rules</h2>", html, StringComparison.Ordinal);
        Assert.Contains("<strong>bold</strong>", html, StringComparison.Ordinal);
        Assert.Contains("<em>italic</em>", html, StringComparison.Ordinal);
        Assert.Contains("<ol>\n<li>one</li>\n<li>two</li>\n</ol>", html, StringComparison.Ordinal);
        Assert.Contains("<ul>\n<li>a</li>\n<li>b</li>\n</ul>", html, StringComparison.Ordinal);
        Assert.Contains("<table>", html, StringComparison.Ordinal);
    }
}
