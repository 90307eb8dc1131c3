namespace TeachServe.Core.Projects;

/// <summary>Where a project's settings and items came from, so validation problems name the right file and line.</summary>
/// <param name="ItemLines">Line each item started on, parallel to the item list; <see langword="null"/> when lines do not apply.</param>
public sealed record ProjectSources(string SettingsFile, string ItemsFile, IReadOnlyList<int>? ItemLines = null)
{
    /// <summary>The two files of a project folder, without line numbers for items.</summary>
    public static ProjectSources Folder { get; } = new(ProjectFolder.SettingsFileName, ProjectFolder.ItemsFileName);
}
