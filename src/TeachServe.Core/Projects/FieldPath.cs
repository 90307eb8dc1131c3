namespace TeachServe.Core.Projects;

/// <summary>Builds the JSON-path-like <see cref="ProjectProblem.Field"/> strings, so every reader and the validator spell them alike.</summary>
internal static class FieldPath
{
    public static string Item(int index) => Index("items", index);

    public static string Index(string path, int index) => $"{path}[{index}]";

    /// <summary>Appends a member; names that are not plain identifiers are bracketed (<c>predictions['seam-07']</c>).</summary>
    public static string Member(string path, string name)
    {
        if (IsPlain(name))
            return path.Length == 0 ? name : $"{path}.{name}";
        return $"{path}['{name.Replace("\\", "\\\\", StringComparison.Ordinal).Replace("'", "\\'", StringComparison.Ordinal)}']";
    }

    private static bool IsPlain(string name)
    {
        if (name.Length == 0 || !(char.IsAsciiLetter(name[0]) || name[0] == '_'))
            return false;
        foreach (var c in name)
        {
            if (!(char.IsAsciiLetterOrDigit(c) || c == '_'))
                return false;
        }
        return true;
    }
}
