namespace TeachServe.Core.Projects;

/// <summary>Guards applied while items are read; going over one is reported as a problem, never thrown.</summary>
public sealed record ItemReaderLimits
{
    public static ItemReaderLimits Default { get; } = new();

    /// <summary>Most items read from one source; reading stops after this many.</summary>
    public int MaxItems { get; init; } = 100_000;

    /// <summary>Longest string (id, label, text, SVG, feature or attribute name…) accepted, in UTF-16 characters.</summary>
    public int MaxStringLength { get; init; } = 100_000;
}
