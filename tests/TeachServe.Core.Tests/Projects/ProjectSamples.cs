using TeachServe.Core.Projects;

namespace TeachServe.Core.Tests.Projects;

/// <summary>A small valid project that each test breaks in exactly one way.</summary>
internal static class ProjectSamples
{
    public static ProjectSettings Settings(string family = FamilyKinds.Linear) => new()
    {
        Name = "sample",
        Labels = ["left", "right"],
        Family = new FamilySettings { Kind = family },
    };

    public static ItemDefinition Item(string id, string pool, string label, double x, double y) => new()
    {
        Id = id,
        Pool = pool,
        Label = label,
        Features = new Dictionary<string, double> { ["x"] = x, ["y"] = y },
        Attributes = x > 0 ? ["bright"] : ["dim"],
        Content = new ItemContent { Text = $"item {id}" },
    };

    public static List<ItemDefinition> Items() =>
    [
        Item("i0", Pools.Teach, "left", -1, 0.5),
        Item("i1", Pools.Teach, "right", 1, 0.25),
        Item("i2", Pools.Teach, "left", -2, 1),
        Item("i3", Pools.Teach, "right", 2, -1),
        Item("i4", Pools.Test, "left", -1.5, 0),
        Item("i5", Pools.Test, "right", 1.5, 0),
    ];

    public static ProjectDefinition Project(string family = FamilyKinds.Linear) => new(Settings(family), Items());

    /// <summary>The <c>project.json</c> text of <see cref="Settings"/>, laid out by hand so line numbers are known.</summary>
    public const string SettingsJson = """
        {
          "name": "sample",
          "labels": ["left", "right"],
          "family": { "kind": "linear" },
          "gate": {
            "targetError": 0.1,
            "test": { "maxItems": 40 }
          }
        }
        """;
}
