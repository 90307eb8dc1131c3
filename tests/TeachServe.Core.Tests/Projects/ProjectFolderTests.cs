using System.Text;
using TeachServe.Core.Projects;

namespace TeachServe.Core.Tests.Projects;

public class ProjectFolderTests
{
    private const string Settings = ProjectFolder.SettingsFileName;
    private const string Items = ProjectFolder.ItemsFileName;

    [Fact]
    public void A_saved_project_loads_back_and_saves_to_the_same_bytes()
    {
        using var first = new TempDirectory();
        using var second = new TempDirectory();
        var project = ProjectSamples.Project();
        ProjectFolder.Save(project, first.Path);

        var loaded = ProjectFolder.Load(first.Path);
        Assert.Equal(ProjectJson.SerializeSettings(project.Settings), ProjectJson.SerializeSettings(loaded.Settings));
        Assert.Equal(project.Items.Select(ProjectJson.SerializeItem), loaded.Items.Select(ProjectJson.SerializeItem));

        ProjectFolder.Save(loaded, second.Path);
        foreach (var name in new[] { Settings, Items })
            Assert.Equal(File.ReadAllBytes(first.File(name)), File.ReadAllBytes(second.File(name)));
    }

    [Fact]
    public void Saved_files_are_utf8_without_bom_with_lf_line_ends()
    {
        using var dir = new TempDirectory();
        ProjectFolder.Save(ProjectSamples.Project(), dir.Path);
        var items = File.ReadAllBytes(dir.File(Items));
        Assert.NotEqual(0xEF, items[0]);
        Assert.DoesNotContain((byte)'\r', items);
        Assert.Equal(ProjectSamples.Items().Count, items.Count(b => b == '\n'));
        Assert.Equal((byte)'\n', items[^1]);
    }

    [Fact]
    public void A_missing_folder_is_reported()
    {
        using var dir = new TempDirectory();
        var missing = dir.File("nope");
        var ex = Assert.Throws<ProjectValidationException>(() => ProjectFolder.Load(missing));
        ProjectValidatorTests.AssertOnly(ex.Problems, missing, null, null);
    }

    [Fact]
    public void Missing_files_are_both_reported()
    {
        using var dir = new TempDirectory();
        var ex = Assert.Throws<ProjectValidationException>(() => ProjectFolder.Load(dir.Path));
        Assert.Equal([(Settings, (int?)null), (Items, null)], ex.Problems.Select(p => (p.File, p.Line)));
        Assert.All(ex.Problems, p => Assert.Equal("the file is missing", p.Message));
    }

    [Fact]
    public void Problems_in_both_files_are_reported_together_and_nothing_loads()
    {
        using var dir = new TempDirectory();
        ProjectFolder.Save(ProjectSamples.Project(), dir.Path);
        File.WriteAllText(dir.File(Settings), ProjectSamples.SettingsJson.Replace("\"targetError\"", "\"targetEror\"", StringComparison.Ordinal));
        var lines = File.ReadAllLines(dir.File(Items));
        lines[2] = lines[2].Replace("\"pool\"", "\"pol\"", StringComparison.Ordinal);
        File.WriteAllLines(dir.File(Items), lines);

        Assert.False(ProjectFolder.TryLoad(dir.Path, out var project, out var problems));
        Assert.Null(project);
        Assert.Equal(
            [(Settings, (int?)6, "gate.targetEror"), (Items, 3, "items[2].pol"), (Items, 3, "items[2].pool")],
            problems.Select(p => (p.File, p.Line, p.Field)));

        var ex = Assert.Throws<ProjectValidationException>(() => ProjectFolder.Load(dir.Path));
        Assert.StartsWith("The project has 3 problems:", ex.Message, StringComparison.Ordinal);
        Assert.Contains("\n  project.json:6: gate.targetEror: unknown member 'targetEror'; did you mean 'targetError'?", ex.Message, StringComparison.Ordinal);
    }

    [Fact]
    public void Validation_problems_on_items_carry_their_line_in_the_file()
    {
        using var dir = new TempDirectory();
        ProjectFolder.Save(ProjectSamples.Project(), dir.Path);
        var lines = File.ReadAllLines(dir.File(Items)).ToList();
        lines[4] = lines[4].Replace("\"label\":\"left\"", "\"label\":\"up\"", StringComparison.Ordinal);
        lines.Insert(1, "");
        File.WriteAllLines(dir.File(Items), lines);

        var ex = Assert.Throws<ProjectValidationException>(() => ProjectFolder.Load(dir.Path));
        ProjectValidatorTests.AssertOnly(ex.Problems, Items, 6, "items[4].label");
    }

    [Fact]
    public void Settings_range_problems_are_reported_after_reading()
    {
        using var dir = new TempDirectory();
        ProjectFolder.Save(ProjectSamples.Project(), dir.Path);
        File.WriteAllText(dir.File(Settings), ProjectSamples.SettingsJson.Replace("0.1", "1.5", StringComparison.Ordinal));
        var ex = Assert.Throws<ProjectValidationException>(() => ProjectFolder.Load(dir.Path));
        ProjectValidatorTests.AssertOnly(ex.Problems, Settings, null, "gate.targetError");
    }

    [Fact]
    public void A_file_that_is_not_utf8_is_reported()
    {
        using var dir = new TempDirectory();
        ProjectFolder.Save(ProjectSamples.Project(), dir.Path);
        File.WriteAllBytes(dir.File(Settings), [.. Encoding.UTF8.GetBytes("{\"name\":\""), 0xFF, 0xFE, .. Encoding.UTF8.GetBytes("\"}")]);
        var ex = Assert.Throws<ProjectValidationException>(() => ProjectFolder.Load(dir.Path));
        var problem = ProjectValidatorTests.AssertOnly(ex.Problems, Settings, null, null);
        Assert.Equal("the file is not valid UTF-8", problem.Message);
    }

    [Fact]
    public void A_byte_order_mark_is_accepted()
    {
        using var dir = new TempDirectory();
        ProjectFolder.Save(ProjectSamples.Project(), dir.Path);
        File.WriteAllText(dir.File(Items), File.ReadAllText(dir.File(Items)), new UTF8Encoding(encoderShouldEmitUTF8Identifier: true));
        Assert.Equal(6, ProjectFolder.Load(dir.Path).Items.Count);
    }

    [Fact]
    public void Other_files_in_the_folder_are_ignored()
    {
        using var dir = new TempDirectory();
        ProjectFolder.Save(ProjectSamples.Project(), dir.Path);
        File.WriteAllText(dir.File("README.md"), "# notes\n");
        Assert.Equal("sample", ProjectFolder.Load(dir.Path).Settings.Name);
    }
}
