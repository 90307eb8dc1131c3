using System.Text;
using TeachServe.Server.Annotate;

namespace TeachServe.Server.Tests;

/// <summary>Hostile SVG: every way we know (common practice, from memory of XSS cheat sheets) to run script or reach out.</summary>
public sealed class SvgSanitizerTests
{
    private const string Open = "<svg xmlns='http://www.w3.org/2000/svg' xmlns:xlink='http://www.w3.org/1999/xlink' viewBox='0 0 10 10'>";

    [Theory]
    [InlineData("<script>alert(1)</script>")]
    [InlineData("<script xlink:href='https://evil.example/x.js'/>")]
    [InlineData("<rect width='5' height='5' onload='alert(1)' onclick='alert(2)'/>")]
    [InlineData("<foreignObject><body xmlns='http://www.w3.org/1999/xhtml'><img src='x' onerror='alert(1)'/></body></foreignObject>")]
    [InlineData("<a href='javascript:alert(1)'><rect width='5' height='5'/></a>")]
    [InlineData("<use href='https://evil.example/sprite.svg#a'/>")]
    [InlineData("<use xlink:href='data:image/svg+xml;base64,PHN2Zz48L3N2Zz4=#a'/>")]
    [InlineData("<image href='https://evil.example/track.png' width='5' height='5'/>")]
    [InlineData("<rect width='5' height='5' fill='url(https://evil.example/p.svg#g)'/>")]
    [InlineData("<rect width='5' height='5' style='fill: url( \"https://evil.example/p\" )'/>")]
    [InlineData("<rect width='5' height='5' style='background:u\\72l(https://evil.example)'/>")]
    [InlineData("<style>@import url(https://evil.example/x.css); rect { fill: red }</style>")]
    [InlineData("<set attributeName='href' to='javascript:alert(1)'/>")]
    [InlineData("<animate attributeName='href' values='javascript:alert(1)'/>")]
    [InlineData("<iframe xmlns='http://www.w3.org/1999/xhtml' src='https://evil.example'/>")]
    [InlineData("<rect width='5' height='5' xml:base='https://evil.example/'/>")]
    public void Script_events_and_outside_references_are_removed(string hostile)
    {
        var clean = SvgSanitizer.Clean(Open + hostile + "<circle cx='5' cy='5' r='2' fill='#123456'/></svg>");
        Assert.NotNull(clean);
        foreach (var banned in new[] { "script", "onload", "onclick", "onerror", "foreignObject", "javascript", "evil.example", "data:", "@import", "set ", "animate", "iframe", "xml:base", "\\" })
            Assert.DoesNotContain(banned, clean, StringComparison.OrdinalIgnoreCase);
        // The harmless drawing survives.
        Assert.Contains("<circle cx=\"5\" cy=\"5\" r=\"2\" fill=\"#123456\"", clean, StringComparison.Ordinal);
    }

    [Fact]
    public void Internal_references_gradients_text_and_accessible_names_are_kept()
    {
        var svg = Open + "<title>seam</title><defs><linearGradient id='g'><stop offset='0' stop-color='#fff'/></linearGradient>" +
                  "<path id='p' d='M0,0 L10,10'/></defs><use xlink:href='#p'/><rect width='5' height='5' fill='url(#g)' role='img' aria-label='bead'/>" +
                  "<text x='1' y='9' font-size='2'>0.3 mm</text></svg>";
        var clean = SvgSanitizer.Clean(svg)!;
        Assert.Contains("href=\"#p\"", clean, StringComparison.Ordinal);
        Assert.Contains("fill=\"url(#g)\"", clean, StringComparison.Ordinal);
        Assert.Contains(">0.3 mm</text>", clean, StringComparison.Ordinal);
        Assert.Contains("<title>seam</title>", clean, StringComparison.Ordinal);
        Assert.Contains("aria-label=\"bead\"", clean, StringComparison.Ordinal);
        Assert.StartsWith("<svg ", clean, StringComparison.Ordinal);
        Assert.Contains("xmlns=\"http://www.w3.org/2000/svg\"", clean, StringComparison.Ordinal);
    }

    [Theory]
    [InlineData("<!DOCTYPE svg [<!ENTITY a 'aaaaaaaaaa'><!ENTITY b '&a;&a;&a;&a;&a;&a;&a;&a;&a;&a;'>]><svg xmlns='http://www.w3.org/2000/svg'><text>&b;</text></svg>")]
    [InlineData("<!DOCTYPE svg [<!ENTITY x SYSTEM 'file:///etc/passwd'>]><svg xmlns='http://www.w3.org/2000/svg'><text>&x;</text></svg>")]
    [InlineData("<svg xmlns='http://www.w3.org/2000/svg'><rect></svg>")]
    [InlineData("<html><body>not a drawing</body></html>")]
    [InlineData("")]
    public void Documents_with_a_dtd_broken_markup_or_another_root_are_refused(string svg) => Assert.Null(SvgSanitizer.Clean(svg));

    [Fact]
    public void Markup_without_the_svg_namespace_is_read_as_svg_and_given_it()
    {
        var clean = SvgSanitizer.Clean("<svg viewBox='0 0 4 4'><rect width='4' height='4'/></svg>")!;
        Assert.Equal("<svg viewBox=\"0 0 4 4\" xmlns=\"http://www.w3.org/2000/svg\"><rect width=\"4\" height=\"4\" /></svg>", clean);
    }

    [Fact]
    public void The_page_gets_a_base64_data_uri_for_an_img_element()
    {
        var uri = SvgSanitizer.DataUri("<svg xmlns='http://www.w3.org/2000/svg'><script>x</script></svg>")!;
        Assert.StartsWith("data:image/svg+xml;base64,", uri, StringComparison.Ordinal);
        var svg = Encoding.UTF8.GetString(Convert.FromBase64String(uri["data:image/svg+xml;base64,".Length..]));
        Assert.Equal("<svg xmlns=\"http://www.w3.org/2000/svg\" />", svg);
    }
}
