using System.Collections.Concurrent;
using System.Text.RegularExpressions;
using System.Xml.Linq;
using TeachServe.Cli.Seeds;
using TeachServe.Core.Projects;
using TeachServe.Core.Tests.Projects;

namespace TeachServe.Core.Tests.Seeds;

public class SeedProjectTests
{
    public static TheoryData<string> Names => [.. SeedCatalog.All.Select(s => s.Name)];

    [Theory]
    [MemberData(nameof(Names))]
    public void The_committed_folder_equals_a_fresh_generation_byte_for_byte(string name)
    {
        var seed = SeedCatalog.Find(name)!;
        var committed = Path.Combine(RepositoryRoot(), "seed-projects", name);
        using var fresh = new TempDirectory();
        Assert.Empty(SeedWriter.Write(seed, seed.DefaultSeed, fresh.Path, out _));

        Assert.Equal(FileNames(fresh.Path), FileNames(committed));
        foreach (var file in FileNames(fresh.Path))
        {
            var expected = File.ReadAllBytes(fresh.File(file));
            var actual = File.ReadAllBytes(Path.Combine(committed, file));
            Assert.True(expected.AsSpan().SequenceEqual(actual),
                $"seed-projects/{name}/{file} differs from a fresh generation; regenerate it as seed-projects/README.md says");
        }
    }

    [Theory]
    [MemberData(nameof(Names))]
    public void The_committed_folder_loads_without_problems(string name)
    {
        var project = ProjectFolder.Load(Path.Combine(RepositoryRoot(), "seed-projects", name));
        Assert.Equal(Lines(Generate(name)), Lines(project));
    }

    [Theory]
    [MemberData(nameof(Names))]
    public void Pools_are_large_enough_and_class_balanced(string name)
    {
        var project = Generate(name);
        var labels = project.Settings.Labels;
        foreach (var (pool, minimum) in new[] { (Pools.Teach, 200), (Pools.Test, 80) })
        {
            var items = project.Items.Where(i => i.Pool == pool).ToList();
            Assert.True(items.Count >= minimum, $"{name}: {items.Count} {pool} items");
            foreach (var label in labels)
            {
                var share = items.Count(i => i.Label == label) / (double)items.Count;
                Assert.InRange(share, 1.0 / labels.Count - 0.1, 1.0 / labels.Count + 0.1);
            }
        }
    }

    [Theory]
    [MemberData(nameof(Names))]
    public void Generation_depends_only_on_the_seed(string name)
    {
        var seed = SeedCatalog.Find(name)!;
        var first = Lines(seed.Generate(seed.DefaultSeed));
        Assert.Equal(first, Lines(seed.Generate(seed.DefaultSeed)));
        Assert.NotEqual(first, Lines(seed.Generate(seed.DefaultSeed + 1)));
        Assert.Empty(ProjectValidator.Validate(seed.Generate(seed.DefaultSeed + 1).Settings, seed.Generate(seed.DefaultSeed + 1).Items));
    }

    [Theory]
    [MemberData(nameof(Names))]
    public void Every_item_has_content_and_an_explanation_and_ids_hide_pool_and_label(string name)
    {
        var project = Generate(name);
        Assert.All(project.Items, i => Assert.False(string.IsNullOrWhiteSpace(i.Explanation)));
        Assert.All(project.Items, i => Assert.Matches(@"^[a-z]+-\d{3}$", i.Id));
        var prefix = project.Items[0].Id.Split('-')[0];
        Assert.Equal(
            Enumerable.Range(1, project.Items.Count).Select(n => $"{prefix}-{n:D3}"),
            project.Items.Select(i => i.Id));
        // Pools are interleaved in the file, not one after the other.
        var firstTest = project.Items.ToList().FindIndex(i => i.Pool == Pools.Test);
        Assert.InRange(firstTest, 0, 20);
    }

    [Theory]
    [InlineData(WeldSeamsSeed.Name)]
    [InlineData(LeafSymptomsSeed.Name)]
    public void Svg_drawings_are_self_contained_well_formed_and_script_free(string name)
    {
        foreach (var item in Generate(name).Items)
        {
            var svg = item.Content!.Svg!;
            Assert.StartsWith("<svg xmlns='http://www.w3.org/2000/svg' ", svg, StringComparison.Ordinal);
            Assert.DoesNotContain("<script", svg, StringComparison.OrdinalIgnoreCase);
            Assert.DoesNotContain("href", svg, StringComparison.OrdinalIgnoreCase);
            Assert.DoesNotContain("url(", svg, StringComparison.OrdinalIgnoreCase);
            Assert.DoesNotMatch(new Regex(@"\son[a-z]+\s*=", RegexOptions.IgnoreCase), svg);
            Assert.Equal("svg", XElement.Parse(svg).Name.LocalName);
            Assert.True(svg.Length < 4000, $"{item.Id}: {svg.Length} characters");
        }
    }

    [Fact]
    public void Weld_seams_follow_a_linear_rule_with_a_few_percent_of_close_calls_flipped_among_test_items_only()
    {
        var project = Generate(WeldSeamsSeed.Name);
        Assert.Equal(FamilyKinds.Linear, project.Settings.Family.Kind);
        var flipped = project.Items.Where(i => i.Label != WeldSeamsSeed.RuleLabel(i.Features!)).ToList();
        var tests = project.Items.Count(i => i.Pool == Pools.Test);
        Assert.InRange(flipped.Count / (double)tests, 0.01, 0.1);
        // An annotator is never taught from a seam whose reference label the drawing contradicts.
        Assert.All(flipped, i => Assert.Equal(Pools.Test, i.Pool));
        Assert.All(flipped, i => Assert.StartsWith("Close call", i.Explanation, StringComparison.Ordinal));
        Assert.All(flipped, i => Assert.InRange(
            WeldSeamsSeed.Score(i.Features![WeldSeamsSeed.BeadWidth], i.Features[WeldSeamsSeed.Undercut], i.Features[WeldSeamsSeed.Pores]), -0.2, 0.2));
        Assert.All(project.Items, i => Assert.Equal([WeldSeamsSeed.BeadWidth, WeldSeamsSeed.Undercut, WeldSeamsSeed.Pores], i.Features!.Keys));
    }

    [Fact]
    public void Weld_seam_pictures_follow_the_features()
    {
        foreach (var item in Generate(WeldSeamsSeed.Name).Items)
        {
            var svg = item.Content!.Svg!;
            Assert.Equal((int)item.Features![WeldSeamsSeed.Pores], Regex.Count(svg, "<circle "));
            Assert.Equal(item.Features[WeldSeamsSeed.Undercut] >= 0.05, svg.Contains("fill='#3b3f45'", StringComparison.Ordinal));
            // The gauge: one mark pair per whole millimetre of width from 4 to 10, labelled every two.
            foreach (var mm in new[] { 4, 6, 8, 10 })
                Assert.Contains($">{mm}</text>", svg, StringComparison.Ordinal);
            Assert.Contains(">mm</text>", svg, StringComparison.Ordinal);
            // A millimetre figure in an explanation refers to the gauge it can be read on.
            if (item.Explanation!.Contains(" mm marks", StringComparison.Ordinal))
                Assert.Contains("gauge", item.Explanation, StringComparison.Ordinal);
        }
    }

    [Fact]
    public void Leaf_drawings_carry_a_scale_bar_on_the_spots_scale()
    {
        foreach (var item in Generate(LeafSymptomsSeed.Name).Items)
        {
            var svg = item.Content!.Svg!;
            Assert.Contains($">{LeafSymptomsSeed.ScaleBarMm} mm</text>", svg, StringComparison.Ordinal);
            var bar = Regex.Match(svg, @"M([\d.]+),143 H186");
            Assert.True(bar.Success, item.Id);
            var length = 186 - double.Parse(bar.Groups[1].Value, System.Globalization.CultureInfo.InvariantCulture);
            Assert.Equal(LeafSymptomsSeed.ScaleBarMm * LeafSymptomsSeed.PixelsPerMm, length, 0.1);
        }
    }

    [Fact]
    public void Weld_seam_bead_height_matches_the_gauge_scale()
    {
        foreach (var item in Generate(WeldSeamsSeed.Name).Items.Take(40))
        {
            // The bead path's upper and lower edges (first and last points) lie ±width/2 from the centre line, give or
            // take the 1.2 px of drawn waviness.
            var bead = XElement.Parse(item.Content!.Svg!).Elements().First(e => (string?)e.Attribute("fill") == "#c49c6c");
            var points = Regex.Matches((string)bead.Attribute("d")!, @"[ML](-?[\d.]+),(-?[\d.]+)")
                .Select(m => double.Parse(m.Groups[2].Value, System.Globalization.CultureInfo.InvariantCulture)).ToList();
            var drawnWidth = (points[^1] - points[0]) / WeldSeamsSeed.PixelsPerMm;
            Assert.InRange(drawnWidth, item.Features![WeldSeamsSeed.BeadWidth] - 0.3, item.Features[WeldSeamsSeed.BeadWidth] + 0.3);
        }
    }

    [Fact]
    public void Weld_seams_readme_carries_the_caution()
    {
        var readme = WeldSeamsSeed.Readme(WeldSeamsSeed.DefaultSeed);
        Assert.Contains("teaching demo, not a weld-inspection qualification", readme, StringComparison.Ordinal);
        Assert.Contains("applicable welding codes", readme, StringComparison.Ordinal);
        Assert.Contains("qualified inspectors", readme, StringComparison.Ordinal);
    }

    [Fact]
    public void Tickets_are_labelled_by_the_decisive_cues_and_their_text_carries_every_cue()
    {
        var project = Generate(TicketTriageSeed.Name);
        Assert.Equal(FamilyKinds.Cues, project.Settings.Family.Kind);
        var known = new[]
        {
            TicketTriageSeed.Outage, TicketTriageSeed.DataLoss, TicketTriageSeed.RepeatContact, TicketTriageSeed.Enterprise,
            TicketTriageSeed.Billing, TicketTriageSeed.PasswordReset, TicketTriageSeed.Greeting,
        };
        Assert.Equal(known.Order(), project.Items.SelectMany(i => i.Attributes!).Distinct().Order());
        foreach (var item in project.Items)
        {
            Assert.Equal(TicketTriageSeed.RuleLabel(item.Attributes!), item.Label);
            Assert.StartsWith("Subject: ", item.Content!.Text, StringComparison.Ordinal);
            Assert.Equal(item.Attributes!.Contains(TicketTriageSeed.Enterprise), item.Content.Text!.Contains("Enterprise", StringComparison.Ordinal));
            Assert.Equal(item.Attributes!.Contains(TicketTriageSeed.RepeatContact),
                item.Content.Text!.Contains("time I am writing", StringComparison.Ordinal) || item.Content.Text.Contains("already reported", StringComparison.Ordinal));
        }
        // The distractor must not give the label away.
        var enterprise = project.Items.Where(i => i.Attributes!.Contains(TicketTriageSeed.Enterprise)).ToList();
        Assert.Contains(enterprise, i => i.Label == TicketTriageSeed.Routine);
        Assert.Contains(enterprise, i => i.Label == TicketTriageSeed.Escalate);
    }

    [Fact]
    public void Leaves_are_labelled_by_the_threshold_rule_and_drawn_with_their_spots()
    {
        var project = Generate(LeafSymptomsSeed.Name);
        Assert.Equal(FamilyKinds.Stumps, project.Settings.Family.Kind);
        Assert.Equal(3, project.Settings.Labels.Count);
        foreach (var item in project.Items)
        {
            Assert.Equal(LeafSymptomsSeed.RuleLabel(item.Features!), item.Label);
            Assert.Equal((int)item.Features![LeafSymptomsSeed.SpotCount], Regex.Count(item.Content!.Svg!, "<circle "));
        }
    }

    // Generation is pure, so tests that only read a default-seed project share one copy.
    private static readonly ConcurrentDictionary<string, ProjectDefinition> Generated = new(StringComparer.Ordinal);

    private static ProjectDefinition Generate(string name) =>
        Generated.GetOrAdd(name, n => SeedCatalog.Find(n)!.Generate(SeedCatalog.Find(n)!.DefaultSeed));

    private static List<string> Lines(ProjectDefinition project) => [.. project.Items.Select(ProjectJson.SerializeItem)];

    private static List<string> FileNames(string directory) =>
        [.. Directory.EnumerateFiles(directory).Select(f => Path.GetFileName(f)!).Order(StringComparer.Ordinal)];

    private static string RepositoryRoot()
    {
        for (var dir = new DirectoryInfo(AppContext.BaseDirectory); dir is not null; dir = dir.Parent)
        {
            if (File.Exists(Path.Combine(dir.FullName, "TeachServe.sln")))
                return dir.FullName;
        }
        throw new InvalidOperationException("TeachServe.sln not found above " + AppContext.BaseDirectory);
    }
}
