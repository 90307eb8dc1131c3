using System.Text;
using System.Text.RegularExpressions;
using System.Xml;
using System.Xml.Linq;

namespace TeachServe.Server.Annotate;

/// <summary>
/// Rebuilds an item's inline SVG from an allow-list of drawing elements and attributes. Everything else goes:
/// scripts, <c>foreignObject</c>, style sheets, animation (it can rewrite attributes), event handlers, links other than
/// internal <c>#fragment</c> references, and <c>url(…)</c> that points outside the document. DTDs are refused, so
/// entity tricks never expand. The page additionally shows the result as an <c>&lt;img&gt;</c> data URI, where a
/// browser runs no script and fetches nothing, in case anything slipped through.
/// </summary>
public static partial class SvgSanitizer
{
    public static readonly XNamespace Svg = "http://www.w3.org/2000/svg";
    private static readonly XNamespace XLink = "http://www.w3.org/1999/xlink";

    private static readonly HashSet<string> Elements = new(StringComparer.Ordinal)
    {
        "svg", "g", "defs", "title", "desc", "symbol", "use", "path", "rect", "circle", "ellipse", "line", "polyline",
        "polygon", "text", "tspan", "linearGradient", "radialGradient", "stop", "clipPath", "mask", "pattern", "marker",
        "filter", "feGaussianBlur", "feOffset", "feBlend", "feColorMatrix", "feMerge", "feMergeNode", "feFlood", "feComposite",
    };

    private static readonly HashSet<string> TextElements = new(StringComparer.Ordinal) { "text", "tspan", "title", "desc" };

    private static readonly HashSet<string> Attributes = new(StringComparer.Ordinal)
    {
        "id", "class", "x", "y", "x1", "y1", "x2", "y2", "cx", "cy", "r", "rx", "ry", "fx", "fy", "width", "height", "d",
        "points", "transform", "viewBox", "preserveAspectRatio", "version", "fill", "fill-opacity", "fill-rule", "stroke",
        "stroke-width", "stroke-opacity", "stroke-linecap", "stroke-linejoin", "stroke-dasharray", "stroke-dashoffset",
        "stroke-miterlimit", "opacity", "font-family", "font-size", "font-weight", "font-style", "text-anchor",
        "dominant-baseline", "letter-spacing", "dx", "dy", "rotate", "textLength", "lengthAdjust", "offset", "stop-color",
        "stop-opacity", "gradientUnits", "gradientTransform", "spreadMethod", "clip-path", "clip-rule", "mask",
        "marker-start", "marker-mid", "marker-end", "markerWidth", "markerHeight", "refX", "refY", "orient", "markerUnits",
        "patternUnits", "patternContentUnits", "patternTransform", "clipPathUnits", "maskUnits", "maskContentUnits",
        "visibility", "display", "role", "aria-label", "aria-hidden", "stdDeviation", "in", "in2", "result", "mode", "type",
        "values", "operator", "k1", "k2", "k3", "k4", "flood-color", "flood-opacity", "filter", "filterUnits",
        "primitiveUnits", "style", "href",
    };

    /// <summary>The sanitised SVG, or null when the input is not a well-formed SVG document.</summary>
    public static string? Clean(string svg)
    {
        XElement root;
        try
        {
            var settings = new XmlReaderSettings
            {
                DtdProcessing = DtdProcessing.Prohibit,
                XmlResolver = null,
                MaxCharactersInDocument = 1_000_000,
                IgnoreProcessingInstructions = true,
                IgnoreComments = true,
            };
            using var reader = XmlReader.Create(new StringReader(svg), settings);
            root = XElement.Load(reader);
        }
        catch (XmlException)
        {
            return null;
        }
        if (NameOf(root) != "svg") return null;
        var clean = CopyElement(root, depth: 0);
        if (clean is null) return null;
        return clean.ToString(SaveOptions.DisableFormatting);
    }

    /// <summary>The sanitised SVG as a data URI for an <c>&lt;img&gt;</c>, or null.</summary>
    public static string? DataUri(string svg) =>
        Clean(svg) is { } clean ? "data:image/svg+xml;base64," + Convert.ToBase64String(Encoding.UTF8.GetBytes(clean)) : null;

    /// <summary>SVG elements by local name; markup written for HTML (no namespace) counts as SVG too.</summary>
    private static string? NameOf(XElement e) =>
        e.Name.Namespace == Svg || e.Name.Namespace == XNamespace.None ? e.Name.LocalName : null;

    private static XElement? CopyElement(XElement source, int depth)
    {
        if (depth > 64 || NameOf(source) is not { } name || !Elements.Contains(name)) return null;
        var copy = new XElement(Svg + name);
        foreach (var attribute in source.Attributes())
        {
            if (attribute.IsNamespaceDeclaration) continue;
            if (CleanAttribute(attribute) is { } kept) copy.SetAttributeValue(kept.Name, kept.Value);
        }
        foreach (var node in source.Nodes())
        {
            switch (node)
            {
                case XElement child when CopyElement(child, depth + 1) is { } cleanChild:
                    copy.Add(cleanChild);
                    break;
                case XText text when TextElements.Contains(name):
                    copy.Add(new XText(text.Value));
                    break;
            }
        }
        return copy;
    }

    private static (XName Name, string Value)? CleanAttribute(XAttribute attribute)
    {
        var ns = attribute.Name.Namespace;
        var local = attribute.Name.LocalName;
        // xlink:href is the SVG 1.1 spelling of href.
        if (ns == XLink && local == "href") local = "href";
        else if (ns != XNamespace.None) return null;
        if (!Attributes.Contains(local)) return null;

        var value = attribute.Value;
        if (local == "href") return value.StartsWith('#') && IsFragment(value) ? ("href", value) : null;
        if (!SafeValue(value)) return null;
        return (local, value);
    }

    private static bool IsFragment(string value) => FragmentPattern().IsMatch(value);

    /// <summary>No script schemes, no CSS escapes or imports, and every url(…) an internal #fragment.</summary>
    private static bool SafeValue(string value)
    {
        var compact = WhitespacePattern().Replace(value, "").ToLowerInvariant();
        if (compact.Contains('\\') || compact.Contains("javascript:", StringComparison.Ordinal)
            || compact.Contains("@import", StringComparison.Ordinal) || compact.Contains("expression(", StringComparison.Ordinal))
            return false;
        var at = 0;
        while ((at = compact.IndexOf("url(", at, StringComparison.Ordinal)) >= 0)
        {
            at += 4;
            var rest = compact.AsSpan(at).TrimStart("'\"");
            if (rest.IsEmpty || rest[0] != '#') return false;
        }
        return true;
    }

    [GeneratedRegex(@"^#[A-Za-z_][A-Za-z0-9_.:-]*$")]
    private static partial Regex FragmentPattern();

    [GeneratedRegex(@"\s+")]
    private static partial Regex WhitespacePattern();
}
