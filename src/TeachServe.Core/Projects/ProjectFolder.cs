using System.Diagnostics.CodeAnalysis;
using System.Text;

namespace TeachServe.Core.Projects;

/// <summary>
/// A project on disk: a folder holding <c>project.json</c> (the <see cref="ProjectSettings"/>) and <c>items.jsonl</c>
/// (one <see cref="ItemDefinition"/> per line). Other files in the folder (a README, say) are ignored.
/// </summary>
public static class ProjectFolder
{
    public const string SettingsFileName = "project.json";
    public const string ItemsFileName = "items.jsonl";

    private static readonly UTF8Encoding Utf8NoBom = new(encoderShouldEmitUTF8Identifier: false, throwOnInvalidBytes: true);

    /// <summary>Loads and validates a project; nothing is returned unless both files read and validate cleanly.</summary>
    /// <exception cref="ProjectValidationException">Lists every problem found in both files.</exception>
    public static ProjectDefinition Load(string directory) =>
        TryLoad(directory, out var project, out var problems) ? project : throw new ProjectValidationException(problems);

    /// <summary>As <see cref="Load"/>, returning the problems instead of throwing.</summary>
    public static bool TryLoad(string directory, [NotNullWhen(true)] out ProjectDefinition? project, out IReadOnlyList<ProjectProblem> problems)
    {
        ArgumentNullException.ThrowIfNull(directory);
        project = null;
        var found = new List<ProjectProblem>();
        problems = found;
        if (!Directory.Exists(directory))
        {
            found.Add(new ProjectProblem(directory, null, null, "the project folder does not exist"));
            return false;
        }

        ProjectSettings? settings = null;
        if (ReadText(directory, SettingsFileName, found) is { } json)
        {
            var (read, settingsProblems) = ProjectJson.ReadSettings(json, SettingsFileName);
            settings = read;
            found.AddRange(settingsProblems);
        }

        ItemReader.ItemReadResult? items = null;
        if (ReadText(directory, ItemsFileName, found) is { } jsonl)
        {
            using var reader = new StringReader(jsonl);
            items = ItemReader.ReadJsonLinesWithLines(reader, ItemsFileName, ItemReaderLimits.Default);
            found.AddRange(items.Problems);
        }

        // Validate even when some item lines failed, so one run reports as much as it can.
        if (settings is not null && items is not null)
            found.AddRange(ProjectValidator.Validate(settings, items.Items, ProjectSources.Folder with { ItemLines = items.Lines }));

        if (found.Count > 0 || settings is null || items is null)
            return false;
        project = new ProjectDefinition(settings, items.Items);
        return true;
    }

    /// <summary>
    /// Writes <c>project.json</c> and <c>items.jsonl</c> into <paramref name="directory"/> (created if needed), UTF-8 without BOM,
    /// LF line ends: the same definition always gives the same bytes. It does not validate; call <see cref="ProjectValidator"/> first.
    /// </summary>
    public static void Save(ProjectDefinition project, string directory)
    {
        ArgumentNullException.ThrowIfNull(project);
        ArgumentNullException.ThrowIfNull(directory);
        Directory.CreateDirectory(directory);
        File.WriteAllText(Path.Combine(directory, SettingsFileName), ProjectJson.SerializeSettings(project.Settings), Utf8NoBom);
        using var writer = new StreamWriter(Path.Combine(directory, ItemsFileName), append: false, Utf8NoBom);
        ProjectJson.WriteJsonLines(writer, project.Items);
    }

    private static string? ReadText(string directory, string fileName, List<ProjectProblem> problems)
    {
        var path = Path.Combine(directory, fileName);
        if (!File.Exists(path))
        {
            problems.Add(new ProjectProblem(fileName, null, null, "the file is missing"));
            return null;
        }
        try
        {
            return File.ReadAllText(path, Utf8NoBom);
        }
        catch (DecoderFallbackException)
        {
            problems.Add(new ProjectProblem(fileName, null, null, "the file is not valid UTF-8"));
        }
        catch (IOException ex)
        {
            problems.Add(new ProjectProblem(fileName, null, null, $"the file cannot be read: {ex.Message}"));
        }
        catch (UnauthorizedAccessException ex)
        {
            problems.Add(new ProjectProblem(fileName, null, null, $"the file cannot be read: {ex.Message}"));
        }
        return null;
    }
}
